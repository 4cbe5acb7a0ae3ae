"""Project-file keys for protection, wiring, discharge, switching and the priced bill of materials.

Mixins composed into the models in ``reportgen.schema`` (see __init__):

* top level: ``rules`` (``nec``, the default, or ``iec``), ``catalog`` (a YAML or CSV
  price list beside the project or in the folder holding the projects) and
  ``protection`` (options for conductors, fuses, discharge, switching, the enclosure
  and capacitors switched with a motor).

Every key is optional; without them the NEC rule set and its stated defaults apply.
"""

from __future__ import annotations

from typing import Literal, Optional

from pydantic import Field

from .fields import Model, Q, Text


class Conductors(Model):
    """How the capacitor circuit conductors are run."""

    material: Literal["copper", "aluminium", "aluminum"] = Field(
        "copper", description="Conductor material (IEC rule set: copper only)")
    insulation_rating: Optional[Literal[60, 70, 75, 90]] = Field(
        None, description="Conductor temperature rating, °C: nec 60, 75 (default) or 90; "
        "iec 70 (PVC, default) or 90 (XLPE)")
    termination_rating: Optional[Literal[60, 75, 90]] = Field(
        None, description="NEC 110.14(C): temperature rating of the terminations, °C (nec only)")
    ambient: Optional[Q("temperature", "Ambient temperature along the run (default 30 °C)",
                        ge=-40, le=100)] = None
    grouped: Optional[int] = Field(
        None, ge=1, le=200, description="nec: current-carrying conductors in one raceway (default 3); "
        "iec: circuits bunched together (default 1)")
    largest_size: Optional[Text] = Field(
        None, max_length=20, description="Largest single conductor before running parallel sets, "
        "e.g. '500 kcmil' or '240 mm2'")
    feeder_length: Optional[Q("length", "Length of the bank feeder run (for the bill of materials)",
                              gt=0, le=10000)] = None
    step_length: Optional[Q("length", "Length of each step's wiring inside the bank", gt=0,
                            le=1000)] = None


class Discharge(Model):
    """Discharge devices across the capacitor elements."""

    built_in: bool = Field(True, description="The units carry internal discharge resistors; false "
                           "adds separate resistors to the bill of materials")
    resistance: Optional[Q("resistance", "Resistance fitted across each element, checked "
                           "against the rule", gt=0)] = None


class SwitchingDevice(Model):
    """What the step contactor or breaker can make when closing onto capacitors (maker's data)."""

    name: Optional[Text] = Field(None, max_length=120, description="Device, e.g. 'capacitor-duty contactor'")
    peak_current: Q("current", "Largest permitted making (inrush) peak current", gt=0)
    frequency_current_product: Optional[float] = Field(
        None, gt=0, description="Largest permitted product of inrush frequency and peak current, "
        "in A·Hz (a plain number)")


class Switching(Model):
    """Inputs of the inrush calculation."""

    source_short_circuit: Optional[Q("apparent_power", "Short-circuit power at the bank's bus "
                                     "(used when the power-quality source is not given)", gt=0)] = None
    inductance_between_steps: Optional[Q("inductance", "Inductance per phase between steps "
                                         "(default 5 µH, common practice)", gt=0, le=1.0)] = None
    device: Optional[SwitchingDevice] = None


class Enclosure(Model):
    """The bank's enclosure and its ventilation."""

    include: bool = Field(True, description="List an enclosure in the bill of materials")
    loss_per_kvar: Optional[float] = Field(
        None, ge=0, le=50, description="Capacitor losses in W per kvar (default 0.5, common practice)")
    detuned_loss_per_kvar: Optional[float] = Field(
        None, ge=0, le=50, description="Detuned step losses including the reactor, W per kvar (default 7)")
    temperature_rise: float = Field(10.0, gt=0, le=40, description="Allowed air temperature rise "
                                    "inside the enclosure, in kelvin")


class MotorCapacitor(Model):
    """A capacitor switched with a motor, on the load side of its controller."""

    load: Text = Field(min_length=1, max_length=120, description="Name of a motor load in loads[]")
    capacitor: Q("reactive_power", "Capacitor rating at the motor, per motor", gt=0)
    side: Literal["load_side_of_overload", "line_side_of_overload"] = Field(
        "load_side_of_overload", description="Where the capacitor connects relative to the overload device")
    no_load_current: Optional[Q("current", "Motor no-load current (checks self-excitation)", gt=0)] = None


class Protection(Model):
    """Protection, wiring, discharge and switching options."""

    fuse_multiple: Optional[float] = Field(
        None, ge=1.0, le=3.0, description="Fuse rating as a multiple of the capacitor's rated current "
        "before rounding up (default 1.65; common practice 1.65–2.5)")
    iec_sizing_factor: Optional[float] = Field(
        None, ge=1.3, le=2.0, description="IEC rule set: cables and switchgear sized for this multiple "
        "of rated current (default 1.5; common practice 1.43–1.5)")
    fused_disconnect: bool = Field(True, description="The feeder fuses sit in the disconnect switch "
                                   "(its rating is then at least the fuse rating)")
    conductors: Optional[Conductors] = None
    discharge: Optional[Discharge] = None
    switching: Optional[Switching] = None
    enclosure: Optional[Enclosure] = None
    motor_capacitors: Optional[list[MotorCapacitor]] = Field(None, min_length=1, max_length=50)


class FileFields(Model):
    rules: Literal["nec", "iec"] = Field(
        "nec", description="Rule set for protection, wiring and discharge: nec (NFPA 70 Article 460) "
        "or iec (IEC 60831-1 with IEC 60364)")
    catalog: Optional[Text] = Field(
        None, max_length=300, description="Price list (YAML or CSV) beside the project or in the "
        "folder holding the projects, e.g. '../catalog.yaml'")
    protection: Optional[Protection] = None


class CorrectionFields(Model):
    pass
