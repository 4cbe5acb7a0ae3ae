"""Feature stages run after the core design, in order.

Each stage is a function ``stage(d: Design) -> None`` that reads the project
model (``d.model``) and the core results, calls the pure numeric core, and
adds to the design: ``d.json[key]`` (JSON results), ``d.parts[key]`` (result
objects for templates), ``d.checks``, ``d.sheets``, ``d.sections`` (template
names under templates/sections/), ``d.figures`` (key -> callable returning
SVG) and ``d.cautions``. A stage does nothing when its inputs are absent.
A ``CalcError`` raised by a stage may carry ``.path`` (a tuple into the YAML,
e.g. ("system", "source")) so the message is located in project.yaml.
"""

STAGES: list = []
