"""``reportgen init NAME``: a new project folder with a commented project.yaml that builds."""

from __future__ import annotations

import re
from pathlib import Path

from .errors import ReportgenError

TEMPLATE = """\
# yaml-language-server: $schema=../project.schema.json
# A reportgen project. Quantities carry their units; PF and efficiency take 0.84 or 84 %.
# Q is positive when inductive. `reportgen schema` prints every key with its meaning.
format: 1
project:
  title: {title}            # required
  client: Client name
  site: Site address
  prepared_by: Your name
  checked_by: Reviewer
  revision: A
  date: {date}
  summary: |
    What the design is for, in a few lines of Markdown.
system:
  frequency: 60 Hz          # 50 Hz or 60 Hz
  phases: 3                 # 1 or 3
  voltage: 480 V            # line-to-line on 3 phases
loads:                      # each load has exactly one of: meter, motor, demand, scope, network
  - name: Main switchboard
    meter:                  # true-rms readings
      current: 400 A
      power: 250 kW         # or power_factor: 0.78, or reactive_power: 180 kvar
  - name: Air compressor
    motor: {{output: 50 hp, efficiency: 93 %, power_factor: 0.84}}
correction:
  target_power_factor: 0.95
  connection: delta         # delta or wye
  unit_sizes: [5 kvar, 10 kvar, 25 kvar, 50 kvar]
"""


def new_project(parent: Path, name: str, date: str) -> Path:
    if not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._-]{0,80}", name):
        raise ReportgenError(f"'{name}' is not a usable folder name (letters, digits, '.', '_', '-')")
    folder = Path(parent) / name
    if folder.exists():
        raise ReportgenError(f"{folder} already exists; nothing written")
    folder.mkdir(parents=True)
    title = name.replace("-", " ").replace("_", " ").strip().capitalize()
    (folder / "project.yaml").write_text(TEMPLATE.format(title=title, date=date), encoding="utf-8")
    return folder
