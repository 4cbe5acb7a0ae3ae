"""Project-file keys for load profiles, stepped automatic banks, tariffs and economics.

Mixins composed into the models in ``reportgen.schema`` (see __init__). Empty until the
profile keys are added: loads[].interval, loads[].billing, correction.bank/steps/controller,
tariff, economics.
"""

from __future__ import annotations

from .fields import Model


class LoadFields(Model):
    pass


class CorrectionFields(Model):
    pass


class FileFields(Model):
    pass
