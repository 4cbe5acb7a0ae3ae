"""Feature stages run after the core design, in this order.

Each stage is a function ``run(d: Design) -> None`` that reads the project
model (``d.model``) and the core results, calls the pure numeric core, and
adds to the design: ``d.json[key]`` (JSON results), ``d.parts[key]`` (result
objects for templates and later stages), ``d.checks``, ``d.sheets``,
``d.sections`` (template names under templates/sections/), ``d.figures``
(key -> callable(d) returning SVG text) and ``d.cautions``. A stage does
nothing when its inputs are absent. A ``CalcError`` raised by a stage may
carry ``.path`` (a tuple into the YAML, e.g. ("system", "source")) so the
message is located in project.yaml.

A feature module may also register load kinds in
``reportgen.design.LOAD_COMPUTERS`` at import time.

Order matters: protection uses the power-quality source (``d.parts["power_quality"]``)
for inrush; the profile/economics stage uses the bill of materials
(``d.parts["bom"]``) for the installed cost.
"""

from . import power_quality, profile, protection

STAGES: list = [power_quality.run, protection.run, profile.run]
