"""The core of the project file format: title block, system, loads, correction.

These pydantic models are the single description of ``project.yaml``. They
validate the loaded data, convert every quantity to an SI float, and give the
JSON Schema that ``reportgen schema`` prints for editors. Field descriptions
are the reference documentation of the format.

Format history: 1 — the first published format.
"""

from __future__ import annotations

import datetime as _dt
from typing import Annotated, Any, Literal, Optional

from pydantic import BeforeValidator, Field, WithJsonSchema, model_validator
from pydantic_core import PydanticCustomError

from .fields import LOAD_KINDS, F, Model, Q, Text, _exactly_one, _quantity

FORMATS = (1,)


# --------------------------------------------------------------------------- project and system


class ProjectInfo(Model):
    """Title block of the report."""

    title: Text = Field(min_length=1, max_length=200, description="Project title (required)")
    client: Optional[Text] = Field(None, max_length=200, description="Client name")
    site: Optional[Text] = Field(None, max_length=200, description="Site or address")
    prepared_by: Optional[Text] = Field(None, max_length=200, description="Who prepared the design")
    checked_by: Optional[Text] = Field(None, max_length=200, description="Who checked it")
    revision: Optional[Text] = Field(None, max_length=40, description="Revision mark, e.g. B")
    date: Optional[_dt.date] = Field(None, description="Issue date, YYYY-MM-DD")
    summary: Optional[str] = Field(None, max_length=20000, description="Markdown text (raw HTML is not rendered)")


class System(Model):
    """The supply at the correction point."""

    frequency: Q("frequency", "System frequency, e.g. 60 Hz", gt=0, le=1e6)
    phases: Literal[1, 3] = Field(description="1 or 3")
    voltage: Q("voltage", "Nominal voltage; line-to-line on 3 phases", gt=0)


# --------------------------------------------------------------------------- loads


class Meter(Model):
    """True-rms meter readings. On 3 phases: line-to-line voltage, line current, total power."""

    voltage: Optional[Q("voltage", "Measured voltage (default: the system voltage)", gt=0)] = None
    current: Q("current", "Measured current", gt=0)
    power: Optional[Q("real_power", "Real power", ge=0)] = None
    power_factor: Optional[F("power factor", "Power factor, 0.84 or 84 %")] = None
    reactive_power: Optional[Q("reactive_power", "Reactive power magnitude", ge=0)] = None
    leading: bool = Field(False, description="True when the current leads the voltage (capacitive)")

    @model_validator(mode="after")
    def _one(self):
        _exactly_one(self, ("power", "power_factor", "reactive_power"), "meter")
        return self


class Motor(Model):
    """A motor from its nameplate: shaft output, efficiency and power factor at the operating load."""

    output: Q("real_power", "Shaft output, in hp or kW", gt=0)
    efficiency: F("efficiency", "Efficiency, 0.94 or 94 %", gt=0.05)
    power_factor: F("power factor", "Power factor at the operating load")
    no_load_current: Optional[Q("current", "No-load (magnetizing) current, for a capacitor at the motor "
                                "terminals", gt=0)] = None
    at_motor: bool = Field(False, description="A capacitor is applied at this motor's terminals")


class Demand(Model):
    """A load known by its real power and power factor."""

    power: Q("real_power", "Real power drawn", gt=0)
    power_factor: F("power factor", "Power factor")
    leading: bool = Field(False, description="True for a capacitive load")


class Scope(Model):
    """Two scope channels: the voltage, and the voltage across a current shunt in series with the load."""

    voltage: Q("voltage", "Voltage channel reading", gt=0)
    voltage_as: Literal["rms", "peak", "peak_to_peak"] = "rms"
    shunt_voltage: Q("voltage", "Shunt channel reading", gt=0)
    shunt_voltage_as: Literal["rms", "peak", "peak_to_peak"] = "rms"
    shunt_resistance: Q("resistance", "Shunt resistance", gt=0)
    time_shift: Optional[Q("time", "Time from a voltage zero crossing to the matching current one", ge=0)] = None
    phase_angle: Optional[Q("angle", "Phase angle between the channels", ge=0, le=1.5707963267948966)] = None
    current: Literal["lagging", "leading"] = "lagging"
    shunt_in_measured_voltage: bool = Field(
        False, description="The voltage channel spans load and shunt: the load voltage is recovered by "
        "phasor subtraction")

    @model_validator(mode="after")
    def _one(self):
        _exactly_one(self, ("time_shift", "phase_angle"), "scope")
        return self


class Element(Model):
    """One node of an impedance tree: a single element, or a series or parallel group."""

    resistor: Optional[Q("resistance", "Resistance", gt=0)] = None
    inductor: Optional[Q("inductance", "Inductance", gt=0)] = None
    capacitor: Optional[Q("capacitance", "Capacitance", gt=0)] = None
    series: Optional[list["Element"]] = Field(None, min_length=1)
    parallel: Optional[list["Element"]] = Field(None, min_length=1)

    @model_validator(mode="after")
    def _one(self):
        _exactly_one(self, ("resistor", "inductor", "capacitor", "series", "parallel"), "network element")
        return self


class Network(Element):
    """A per-phase impedance tree fed from the system voltage."""

    connection: Literal["wye", "delta"] = Field("wye", description="3 phases: how the three impedances connect")


class Load(Model):
    """One load at the correction point, described by exactly one kind of measurement."""

    name: Text = Field(min_length=1, max_length=120)
    count: int = Field(1, ge=1, le=10000, description="How many identical loads")
    meter: Optional[Meter] = None
    motor: Optional[Motor] = None
    demand: Optional[Demand] = None
    scope: Optional[Scope] = None
    network: Optional[Network] = None

    @model_validator(mode="after")
    def _one(self):
        _exactly_one(self, self.kinds(), f"load '{self.name}'")
        return self

    @classmethod
    def kinds(cls) -> tuple[str, ...]:
        return tuple(k for k in LOAD_KINDS if k in cls.model_fields)

    @property
    def kind(self) -> str:
        return next(k for k in self.kinds() if getattr(self, k) is not None)


LOAD_KINDS.extend(["meter", "motor", "demand", "scope", "network"])


# --------------------------------------------------------------------------- correction


def _unit_size(raw: Any) -> dict:
    """A unit on hand: kvar at rated voltage and frequency, or a capacitance."""
    if isinstance(raw, str) and raw.strip().endswith("F"):
        return {"c_f": _quantity("capacitance", 0.0, True, None, raw)}
    return {"q_var": _quantity("reactive_power", 0.0, True, None, raw)}


UnitSize = Annotated[
    dict,
    BeforeValidator(_unit_size),
    WithJsonSchema({"type": "string", "description": "A unit on hand: '25 kvar' or '0.47 uF'",
                    "examples": ["25 kvar", "0.47 uF"]}),
]


class Correction(Model):
    """The capacitor bank to design."""

    target_power_factor: F("power factor", "Target power factor, 0 < pf <= 1")
    connection: Literal["delta", "wye"] = Field("delta", description="3-phase bank connection")
    rated_voltage: Optional[Q("voltage", "Capacitor nameplate voltage (default: system voltage)", gt=0)] = None
    rated_frequency: Optional[Q("frequency", "Capacitor nameplate frequency (default: system)", gt=0)] = None
    unit_sizes: Optional[list[UnitSize]] = Field(
        None, min_length=1, max_length=30, description="Units on hand; a standard series when omitted")
    allow_leading: bool = Field(False, description="Allow the bank to take the PF past unity, up to the target leading")


# --------------------------------------------------------------------------- the file


class ProjectFile(Model):
    """A reportgen project file (project.yaml)."""

    format: Literal[1] = Field(description="Format version of this file")
    project: ProjectInfo
    system: System
    loads: list[Load] = Field(min_length=1, max_length=500)
    correction: Correction


