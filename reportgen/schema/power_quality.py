"""Project-file keys for power quality: the source, load harmonics, waveform captures, detuning.

Mixins composed into the models in ``reportgen.schema`` (see __init__). Empty until the
power-quality keys are added: system.source, loads[].harmonics, loads[].waveform,
correction.detuning, correction.at_motor.
"""

from __future__ import annotations

from .fields import Model


class SystemFields(Model):
    pass


class LoadFields(Model):
    pass


class CorrectionFields(Model):
    pass
