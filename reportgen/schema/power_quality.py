"""Project-file keys for power quality: the source, load harmonics, waveform captures, detuning.

Mixins composed into the models in ``reportgen.schema`` (see __init__):
``system.source`` (the supply seen from the bus), ``loads[].harmonics`` (harmonic
currents of a load), ``loads[].waveform`` (a new load kind: a sampled voltage and
current capture in a CSV file), ``correction.detuning`` (a series reactor) and
``correction.at_motor`` (capacitors applied at the motor terminals). Every key is
optional: a format 1 file without them reads as before, and the power-quality
checks then say "not assessed".
"""

from __future__ import annotations

from typing import Annotated, Any, Optional

from pydantic import BeforeValidator, Field, WithJsonSchema, model_validator
from pydantic_core import PydanticCustomError

from .fields import LOAD_KINDS, F, Model, Q, Text, _exactly_one, _fraction

MAX_ORDER = 50

XR = Annotated[float, Field(gt=0, le=1000, description="X/R ratio (a plain number, e.g. 10)")]


class Utility(Model):
    """The utility supply: its fault level at a stated voltage and its X/R ratio."""

    short_circuit_power: Optional[Q("apparent_power", "Utility short-circuit power, e.g. 250 MVA", gt=0)] = None
    fault_current: Optional[Q("current", "Utility three-phase fault current at its voltage, e.g. 10.5 kA",
                              gt=0)] = None
    x_r: XR
    voltage: Q("voltage", "Utility voltage at which the fault level is given, e.g. 13.8 kV", gt=0)

    @model_validator(mode="after")
    def _one(self):
        _exactly_one(self, ("short_circuit_power", "fault_current"), "utility")
        return self


class Transformer(Model):
    """The supply transformer between the utility and the bus."""

    rating: Q("apparent_power", "Transformer rating, e.g. 1500 kVA", gt=0)
    impedance: F("transformer impedance", "Impedance in % on its own rating, e.g. 5.75 %", gt=0.0, le=0.5)
    x_r: XR


class Source(Model):
    """The supply seen from the bus: utility (with an optional transformer), or the bus's own fault level."""

    utility: Optional[Utility] = None
    transformer: Optional[Transformer] = None
    short_circuit_power: Optional[Q("apparent_power", "Short-circuit power at the bus itself, e.g. 24 MVA",
                                    gt=0)] = None
    x_r: Optional[XR] = None

    @model_validator(mode="after")
    def _form(self):
        bus = self.short_circuit_power is not None or self.x_r is not None
        if self.utility is not None and bus:
            raise PydanticCustomError(
                "exactly_one", "give either utility (and transformer) or the bus's own "
                "short_circuit_power and x_r, not both")
        if self.utility is None:
            if self.transformer is not None:
                raise PydanticCustomError("exactly_one", "a transformer needs the utility "
                                          "that feeds it (give utility: {short_circuit_power, x_r, voltage})")
            if self.short_circuit_power is None or self.x_r is None:
                raise PydanticCustomError(
                    "exactly_one", "give utility: {...} (and transformer: {...}), or "
                    "short_circuit_power and x_r of the bus together")
        return self


class SystemFields(Model):
    source: Optional[Source] = Field(
        None, description="The supply seen from the correction point; without it harmonics, resonance and "
        "voltage rise are not assessed")


# --------------------------------------------------------------------------- loads


def _harmonics(raw: Any) -> Any:
    """``{5: 25 %, 7: 10 %}`` -> {5: 0.25, 7: 0.10}: orders 2..50, each a fraction of the fundamental."""
    if not isinstance(raw, dict):
        raise PydanticCustomError("range", "expected a mapping of harmonic order to % of the load's "
                                  "fundamental current, e.g. {5: 25 %, 7: 10 %}")
    out: dict[int, float] = {}
    for key, value in raw.items():
        order = key
        if isinstance(key, str) and key.strip().isdigit():
            order = int(key.strip())
        if not isinstance(order, int) or isinstance(order, bool) or not (2 <= order <= MAX_ORDER):
            raise PydanticCustomError("range", f"harmonic order {key!r} is not a whole number from 2 to "
                                      f"{MAX_ORDER}")
        try:
            v = _fraction(f"harmonic current of order {order}", 0.0, False, 2.0, value)
        except PydanticCustomError as exc:
            raise PydanticCustomError("range", f"order {order}: {exc.message()}") from None
        out[order] = v
    return out


Harmonics = Annotated[
    dict,
    BeforeValidator(_harmonics),
    WithJsonSchema({"type": "object", "description": "Harmonic currents of this load: order (2..50) to % of "
                    "its fundamental current, e.g. {5: 25 %, 7: 10 %}",
                    "additionalProperties": {"anyOf": [{"type": "number"}, {"type": "string"}]}}),
]


class Waveform(Model):
    """A sampled capture of one phase: time, voltage and current (or shunt voltage) columns of a CSV file.

    On 3 phases the capture is one phase of a balanced load (line-to-neutral voltage, line current)
    and the load's P and Q are three times the captured ones.
    """

    file: Text = Field(min_length=1, max_length=300, description="CSV file beside project.yaml")
    time_column: Text = Field(min_length=1, description="Header of the time column, in seconds")
    voltage_column: Text = Field(min_length=1, description="Header of the voltage column, in volts")
    current_column: Optional[Text] = Field(None, min_length=1, description="Header of the current column, "
                                           "in amperes")
    shunt_column: Optional[Text] = Field(None, min_length=1, description="Header of a shunt-voltage column, "
                                         "in volts (instead of current_column)")
    shunt_resistance: Optional[Q("resistance", "Shunt resistance, with shunt_column", gt=0)] = None

    @model_validator(mode="after")
    def _current(self):
        _exactly_one(self, ("current_column", "shunt_column"), "waveform")
        if self.shunt_column is not None and self.shunt_resistance is None:
            raise PydanticCustomError("exactly_one", "shunt_column needs shunt_resistance")
        if self.shunt_column is None and self.shunt_resistance is not None:
            raise PydanticCustomError("exactly_one", "shunt_resistance goes with shunt_column, "
                                      "not with current_column")
        return self


class LoadFields(Model):
    waveform: Optional[Waveform] = None
    harmonics: Optional[Harmonics] = None

    @model_validator(mode="after")
    def _harmonics_source(self):
        if self.harmonics is not None and self.waveform is not None:
            raise PydanticCustomError("exactly_one", "a waveform load takes its harmonics from the capture; "
                                      "remove harmonics or the waveform")
        return self


LOAD_KINDS.extend(["waveform"])


# --------------------------------------------------------------------------- correction


class CorrectionFields(Model):
    detuning: Optional[F("detuning", "Series reactor relative impedance p = X_L/X_C at the fundamental, e.g. "
                         "7 % (5.67 %, 7 % and 14 % are usual)", gt=0.0, le=0.5)] = None
    at_motor: bool = Field(False, description="Capacitors are applied at the terminals of every motor load "
                           "(checked against its no-load magnetizing kvar)")
