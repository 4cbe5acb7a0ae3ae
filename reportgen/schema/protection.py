"""Project-file keys for protection, wiring, discharge, switching and the priced bill of materials.

Mixins composed into the models in ``reportgen.schema`` (see __init__). Empty until the
protection keys are added: rules, catalog, protection options.
"""

from __future__ import annotations

from .fields import Model


class FileFields(Model):
    pass


class CorrectionFields(Model):
    pass
