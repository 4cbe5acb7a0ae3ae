"""The project file format, declared once: every key, its kind, unit and range.

These pydantic models are the single description of ``project.yaml``. They
validate the loaded data, convert every quantity to an SI float, and give the
JSON Schema that ``reportgen schema`` prints. Field descriptions are the
reference documentation of the format.

Layout: ``fields`` (quantity and ratio field types), ``core`` (title block,
system, the basic load kinds, correction), and one module per feature whose
mixins add keys to the core models here: ``power_quality``, ``protection``,
``profile``. The order of the bases decides the order of keys in the schema.
"""

from __future__ import annotations

from pydantic import Field

from . import core
from . import power_quality as _pq
from . import profile as _prof
from . import protection as _prot
from .core import (FORMATS, Demand, Element, Meter, Motor, Network, ProjectInfo, Scope)  # noqa: F401
from .fields import LOAD_KINDS  # noqa: F401


class System(_pq.SystemFields, core.System):
    __doc__ = core.System.__doc__


class Load(_prof.LoadFields, _pq.LoadFields, core.Load):
    __doc__ = core.Load.__doc__


class Correction(_prof.CorrectionFields, _prot.CorrectionFields, _pq.CorrectionFields, core.Correction):
    __doc__ = core.Correction.__doc__


class ProjectFile(_prof.FileFields, _prot.FileFields, core.ProjectFile):
    """A reportgen project file (project.yaml)."""

    system: System
    loads: list[Load] = Field(min_length=1, max_length=500)
    correction: Correction


def json_schema() -> dict:
    schema = ProjectFile.model_json_schema()
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "reportgen project file"
    return schema
