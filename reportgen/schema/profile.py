"""Project-file keys for load profiles, stepped automatic banks, tariffs and economics.

Mixins composed into the models in ``reportgen.schema`` (see __init__):

* ``loads[].interval`` — interval meter data (CSV): timestamp, real power and reactive power
  or power factor per interval; any interval length, gaps allowed and reported.
* ``loads[].billing`` — monthly billing history (CSV): kWh, kvarh, peak kW, optional peak kVA
  and billed amount.
* ``correction.bank`` (``fixed`` | ``automatic``), ``correction.steps`` (``{count, size}`` or
  ``design``), ``correction.controller`` (target PF and ``never_leading``),
  ``correction.step_design`` (options of the design search).
* ``tariff`` — the parts of the rate schedule that the power factor changes.
* ``economics`` — installed cost, discount rate, period, losses.

Money is written as plain strings and read by the small strict parser below (no pint):
an amount is ``"<number> <CUR>"`` (``"30000 USD"``); a rate is ``"<number> [<CUR>] per <unit>"``
(``"14.50 per kW-month"``, ``"0.11 per kWh"``, ``"0.11 USD per kWh"``). Rates are stored per SI
unit (per W-month, per Wh, ...). Whether the currencies written match ``tariff.currency`` is a
check across keys: :func:`cross_problems` lists those problems with their YAML paths.
"""

from __future__ import annotations

import math
import re
from typing import Annotated, Any, Literal, Optional

from pydantic import BeforeValidator, Field, WithJsonSchema, field_validator, model_validator
from pydantic_core import PydanticCustomError

from .fields import LOAD_KINDS, F, Model, Q, Text

# --------------------------------------------------------------------------- money parser

_NUM = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)"
_AMOUNT = re.compile(rf"^\s*({_NUM})\s*([A-Za-z]{{3}})\s*$")
_RATE = re.compile(rf"^\s*({_NUM})\s*(?:([A-Za-z]{{3}})\s+)?per\s+(\S+)\s*$")

#: rate units accepted, by what they price: unit as written (case-insensitive) -> (SI unit, factor).
#: A price per kW-month is 1/1000 of that price per W-month.
RATE_UNITS: dict[str, dict[str, tuple[str, float]]] = {
    "demand": {"w-month": ("W-month", 1.0), "kw-month": ("W-month", 1e-3), "mw-month": ("W-month", 1e-6),
               "va-month": ("VA-month", 1.0), "kva-month": ("VA-month", 1e-3),
               "mva-month": ("VA-month", 1e-6)},
    "energy": {"wh": ("Wh", 1.0), "kwh": ("Wh", 1e-3), "mwh": ("Wh", 1e-6)},
    "reactive": {"varh": ("varh", 1.0), "kvarh": ("varh", 1e-3), "mvarh": ("varh", 1e-6),
                 "var-month": ("var-month", 1.0), "kvar-month": ("var-month", 1e-3),
                 "mvar-month": ("var-month", 1e-6)},
}
_SHOW = {"w-month": "W-month", "kw-month": "kW-month", "mw-month": "MW-month", "va-month": "VA-month",
         "kva-month": "kVA-month", "mva-month": "MVA-month", "wh": "Wh", "kwh": "kWh", "mwh": "MWh",
         "mvarh": "Mvarh", "mvar-month": "Mvar-month"}
_RATE_EXAMPLE = {"demand": "'14.50 per kW-month'", "energy": "'0.11 per kWh'",
                 "reactive": "'0.02 per kvarh' or '1.20 per kvar-month'"}


class MoneyProblem(ValueError):
    """A money string that cannot be read; the message is meant for the user."""


def _number(text: str, raw: Any) -> float:
    v = float(text)
    if not math.isfinite(v) or abs(v) > 1e12:
        raise MoneyProblem(f"'{raw}' is an implausible amount")
    return v


def parse_amount(raw: Any) -> dict:
    """``"30000 USD"`` -> ``{"amount": 30000.0, "currency": "USD", "text": ...}``.

    The currency is a three-letter code after the number. Thousands separators, currency
    symbols and a missing currency are refused with a message saying how to write it.
    """
    if isinstance(raw, bool) or raw is None or isinstance(raw, (int, float)):
        raise MoneyProblem(f"'{raw}' has no currency; write an amount with its currency code, e.g. '30000 USD'")
    if not isinstance(raw, str):
        raise MoneyProblem("expected an amount with its currency code, e.g. '30000 USD'")
    m = _AMOUNT.match(raw)
    if not m:
        if re.match(rf"^\s*{_NUM}\s*$", raw):
            raise MoneyProblem(f"'{raw}' has no currency; write an amount with its currency code, e.g. '30000 USD'")
        if "," in raw:
            raise MoneyProblem(f"'{raw}': write the amount without thousands separators, e.g. '30000 USD'")
        raise MoneyProblem(f"'{raw}' is not an amount such as '30000 USD' (a number, then a three-letter "
                           "currency code)")
    value = _number(m.group(1), raw)
    if value < 0:
        raise MoneyProblem(f"'{raw}': an amount here must not be negative")
    return {"amount": value, "currency": m.group(2).upper(), "text": raw.strip()}


def parse_rate(raw: Any, what: str) -> dict:
    """``"14.50 per kW-month"`` -> ``{"rate": 0.0145, "per": "W-month", "currency": None, ...}``.

    ``what`` is ``"demand"``, ``"energy"`` or ``"reactive"`` (the unit families of
    :data:`RATE_UNITS`). ``rate`` is the price per SI unit; ``per`` names that unit.
    """
    ex = _RATE_EXAMPLE[what]
    if isinstance(raw, bool) or raw is None or isinstance(raw, (int, float)):
        raise MoneyProblem(f"'{raw}' has no unit; write the price with 'per' and its unit, e.g. {ex}")
    if not isinstance(raw, str):
        raise MoneyProblem(f"expected a price such as {ex}")
    m = _RATE.match(raw)
    if not m:
        raise MoneyProblem(f"'{raw}' is not a price such as {ex} (a number, an optional currency code, "
                           "'per' and a unit)")
    unit = m.group(3)
    found = RATE_UNITS[what].get(unit.lower())
    if found is None:
        allowed = ", ".join(_SHOW.get(k, k) for k in RATE_UNITS[what])
        raise MoneyProblem(f"'{raw}': '{unit}' is not a unit this price can be per; use one of {allowed}")
    value = _number(m.group(1), raw)
    if value < 0:
        raise MoneyProblem(f"'{raw}': a price must not be negative")
    si, factor = found
    return {"rate": value * factor, "per": si, "unit": unit, "value": value,
            "currency": m.group(2).upper() if m.group(2) else None, "text": raw.strip()}


def parse_loss_per_var(raw: Any) -> float:
    """``"0.5 W/kvar"`` -> 0.0005 (W per var)."""
    m = re.match(rf"^\s*({_NUM})\s*(W|kW)\s*/\s*(var|kvar|Mvar)\s*$", raw) if isinstance(raw, str) else None
    if not m:
        raise MoneyProblem(f"'{raw}' is not a loss per kvar such as '0.5 W/kvar'")
    v = float(m.group(1)) * (1e3 if m.group(2) == "kW" else 1.0) / {"var": 1.0, "kvar": 1e3, "Mvar": 1e6}[m.group(3)]
    if not 0.0 <= v <= 0.1:
        raise MoneyProblem(f"'{raw}' is out of range: capacitor losses are 0 to 100 W/kvar")
    return v


def _custom(fn, *args):
    def run(raw):
        try:
            return fn(raw, *args)
        except MoneyProblem as exc:
            raise PydanticCustomError("range", str(exc)) from None

    return BeforeValidator(run)


Amount = Annotated[dict, _custom(parse_amount), WithJsonSchema(
    {"type": "string", "description": "An amount with its currency code", "examples": ["30000 USD"]})]


def Rate(what: str, description: str):
    return Annotated[dict, _custom(parse_rate, what), WithJsonSchema(
        {"type": "string", "description": description, "examples": [_RATE_EXAMPLE[what].split(" or ")[0].strip("'")]})]


# --------------------------------------------------------------------------- loads


class IntervalFile(Model):
    """Interval meter data: one CSV row per interval, the average demand over it."""

    file: Text = Field(min_length=1, description="CSV file beside project.yaml, with a header row")
    timestamp_column: Text = Field(min_length=1, description="Column of ISO 8601 timestamps, e.g. "
                                   "2025-01-31 13:45 (the start of each interval)")
    power_column: Text = Field(min_length=1, description="Column of real power per interval")
    reactive_column: Optional[Text] = Field(None, description="Column of reactive power (+ inductive)")
    power_factor_column: Optional[Text] = Field(
        None, description="Column of power factor, used when there is no reactive column (negative = leading)")
    power_unit: Literal["W", "kW", "MW"] = Field(
        "kW", description="Unit of the power column; the reactive column uses the same prefix (kvar with kW)")

    @model_validator(mode="after")
    def _one(self):
        given = [k for k in ("reactive_column", "power_factor_column") if getattr(self, k) is not None]
        if len(given) != 1:
            raise PydanticCustomError(
                "exactly_one", "give exactly one of reactive_column, power_factor_column"
                + (f" (got {', '.join(given)})" if given else ""))
        return self


class BillingFile(Model):
    """Monthly billing history: columns month (YYYY-MM), kwh, kvarh, peak_kw, optional peak_kva and
    billed_amount."""

    file: Text = Field(min_length=1, description="CSV file beside project.yaml, one row per month")


class LoadFields(Model):
    interval: Optional[IntervalFile] = Field(None, description="Interval meter data (load profile)")
    billing: Optional[BillingFile] = Field(None, description="Monthly billing history; adds no power at "
                                           "the correction point, feeds the bill comparison")


LOAD_KINDS.extend(["interval", "billing"])


# --------------------------------------------------------------------------- correction


class Steps(Model):
    """The steps of an automatic bank: ``{count: 6, size: 50 kvar}``, or ``design``."""

    count: Optional[int] = Field(None, ge=1, le=60, description="Number of steps (binary: at most 16)")
    size: Optional[Q("reactive_power", "Nameplate kvar of one step (binary: of the smallest step)", gt=0)] = None
    weighting: Literal["equal", "binary"] = Field(
        "equal", description="equal steps, or binary-weighted steps 1:2:4:... of size")
    design: bool = Field(False, description="true (or steps: design): let reportgen choose the steps")

    @model_validator(mode="after")
    def _check(self):
        if self.design:
            extra = [k for k in ("count", "size") if getattr(self, k) is not None]
            if extra:
                raise PydanticCustomError("exactly_one", f"give either design or count and size (got "
                                          f"design and {', '.join(extra)})")
            return self
        missing = [k for k in ("count", "size") if getattr(self, k) is None]
        if missing:
            raise PydanticCustomError("exactly_one", f"give count and size (missing {', '.join(missing)}), "
                                      "or write steps: design")
        if self.weighting == "binary" and self.count > 16:
            raise PydanticCustomError("range", f"a binary-weighted bank has at most 16 steps, got {self.count}")
        return self


def _steps(raw: Any) -> Any:
    if isinstance(raw, str):
        if raw.strip() == "design":
            return {"design": True}
        raise PydanticCustomError("range", f"'{raw}': write steps: design to let reportgen choose the steps, "
                                  "or give them as {count: 6, size: 50 kvar}")
    return raw


StepsField = Annotated[Steps, BeforeValidator(_steps), WithJsonSchema({
    "description": "Steps of an automatic bank: {count, size, weighting} or the string 'design'",
    "anyOf": [{"const": "design"},
              {"type": "object", "properties": {"count": {"type": "integer"}, "size": {"type": "string"},
                                                "weighting": {"enum": ["equal", "binary"]}},
               "additionalProperties": False}]})]


class Controller(Model):
    """The switching rule of an automatic bank's controller."""

    target_power_factor: Optional[F("power factor", "PF the controller aims for (default: "
                                    "correction.target_power_factor)")] = None
    never_leading: bool = Field(True, description="Never switch in a step that would make the PF leading")


class BankCost(Model):
    """A cost model for ranking the candidate banks: fixed + per kvar + per step."""

    fixed: Amount = Field(description="Enclosure, controller, main protection: e.g. 1500 USD")
    per_kvar: Amount = Field(description="Per kvar installed: e.g. 30 USD")
    per_step: Amount = Field(description="Per step (contactor, fuses, wiring): e.g. 250 USD")


class StepDesign(Model):
    """Options of the step design search (steps: design)."""

    share: F("share", "Share of intervals that must reach the target PF (default 95 %)") = 0.95
    max_steps: int = Field(12, ge=1, le=60, description="Most equal steps tried")
    binary: bool = Field(True, description="Also try binary-weighted banks")
    max_binary_steps: int = Field(6, ge=2, le=16, description="Most binary-weighted steps tried")
    max_total: Optional[Q("reactive_power", "Largest bank allowed (nameplate)", gt=0)] = None
    cost: Optional[BankCost] = Field(None, description="Cost model for the ranking; without it an "
                                     "indicative placeholder model is used (not a price)")


class CorrectionFields(Model):
    bank: Optional[Literal["fixed", "automatic"]] = Field(
        None, description="fixed (the core sizing, one bank always on) or automatic (switched steps)")
    steps: Optional[StepsField] = None
    controller: Optional[Controller] = Field(None, description="Switching rule of an automatic bank")
    step_design: Optional[StepDesign] = Field(None, description="Options for steps: design")

    @model_validator(mode="after")
    def _bank(self):
        auto = self.bank == "automatic"
        if auto and self.steps is None:
            raise PydanticCustomError("exactly_one", "an automatic bank needs steps: "
                                      "{count: 6, size: 50 kvar} or steps: design")
        for key in ("steps", "controller", "step_design"):
            if not auto and getattr(self, key) is not None:
                raise PydanticCustomError("exactly_one", f"{key} applies to an automatic bank only; "
                                          "add bank: automatic")
        if self.step_design is not None and not (self.steps is not None and self.steps.design):
            raise PydanticCustomError("exactly_one", "step_design applies to steps: design only")
        return self


# --------------------------------------------------------------------------- tariff and economics


class PowerFactorClause(Model):
    """How the tariff charges for a low power factor."""

    kind: Literal["adjusted_demand", "kva_demand", "kvarh_charge"] = Field(
        description="adjusted_demand: billed kW raised below a reference PF; kva_demand: the demand charge "
        "is per peak kVA; kvarh_charge: a charge for reactive energy or demand above a free share")
    reference_power_factor: Optional[F("power factor", "adjusted_demand: PF below which the demand is raised")] = None
    form: Literal["ratio", "linear"] = Field(
        "ratio", description="adjusted_demand: ratio (kW x reference / PF) or linear (kW x [1 + slope x "
        "(reference - PF)])")
    slope: float = Field(1.0, gt=0, le=20, description="adjusted_demand, linear form: the slope")
    max_increase: Optional[F("share", "adjusted_demand: cap on the increase, e.g. 10 %", le=10.0)] = None
    rate: Optional[Rate("reactive", "kvarh_charge: price per kvarh, or per kvar-month of peak reactive demand")] = None
    free_ratio: float = Field(0.5, ge=0, le=5, description="kvarh_charge: kvarh (or kvar) free up to this "
                              "ratio of kWh (or kW)")


class TariffFields(Model):
    """The parts of the utility's rate schedule that the power factor changes."""

    currency: str = Field(pattern=r"^[A-Z]{3}$", description="Three-letter currency code, e.g. USD")
    demand_charge: Rate("demand", "Price per kW-month of billed demand (per kVA-month under kva_demand)")
    energy_charge: Rate("energy", "Price per kWh")
    power_factor_clause: Optional[PowerFactorClause] = None
    customer_charge: Optional[Amount] = Field(None, description="Fixed charge per month")
    name: Optional[Text] = Field(None, max_length=120, description="Name of the rate schedule")


def _cost(raw: Any) -> Any:
    if isinstance(raw, str) and raw.strip() == "from_bom":
        return {"from_bom": True}
    return parse_amount(raw)


def _cost_checked(raw: Any) -> Any:
    try:
        return _cost(raw)
    except MoneyProblem as exc:
        raise PydanticCustomError("range", str(exc) + " or from_bom") from None


def _loss(raw: Any) -> float:
    try:
        return parse_loss_per_var(raw)
    except MoneyProblem as exc:
        raise PydanticCustomError("range", str(exc)) from None


class EconomicsFields(Model):
    """Investment figures: installed cost, discount rate, period, losses."""

    installed_cost: Annotated[dict, BeforeValidator(_cost_checked), WithJsonSchema(
        {"type": "string", "description": "from_bom (the priced bill of materials) or an amount such as "
         "'30000 USD'", "examples": ["from_bom", "30000 USD"]})]
    discount_rate: F("discount rate", "Per year, e.g. 7 %", gt=None, le=1.0)
    years: int = Field(ge=1, le=60, description="Evaluation period in years")
    capacitor_losses: Annotated[float, BeforeValidator(_loss), WithJsonSchema(
        {"type": "string", "description": "Losses of the bank per kvar in service (default 0.5 W/kvar)",
         "examples": ["0.5 W/kvar"]})] = 0.0005
    feeder_resistance: Optional[Q("resistance", "Resistance of one phase conductor of the feeder between "
                                  "the supply and the bank, for the I²R saving", ge=0)] = None
    transformer_rating: Optional[Q("apparent_power", "Rating of the supply transformer", gt=0)] = None
    transformer_load_loss: Optional[Q("real_power", "Load (copper) loss of the transformer at its rating",
                                      ge=0)] = None

    @field_validator("discount_rate")
    @classmethod
    def _rate(cls, v):
        if v < 0:
            raise PydanticCustomError("range", f"'{v * 100:g} %' is out of range: must not be negative")
        return v

    @model_validator(mode="after")
    def _tx(self):
        if (self.transformer_rating is None) != (self.transformer_load_loss is None):
            raise PydanticCustomError("exactly_one", "give transformer_rating and "
                                      "transformer_load_loss together")
        return self


class FileFields(Model):
    tariff: Optional[TariffFields] = Field(None, description="Tariff: demand and energy charges, PF clause")
    economics: Optional[EconomicsFields] = Field(None, description="Savings, payback, NPV and IRR")


# --------------------------------------------------------------------------- checks across keys


def cross_problems(m: Any) -> list[tuple[tuple, str]]:
    """Problems that involve more than one key: ``[(yaml path, message), ...]``."""
    out: list[tuple[tuple, str]] = []
    t, e = getattr(m, "tariff", None), getattr(m, "economics", None)
    if t is not None:
        for key in ("demand_charge", "energy_charge"):
            cur = getattr(t, key)["currency"]
            if cur is not None and cur != t.currency:
                out.append((("tariff", key), f"tariff.{key}: '{getattr(t, key)['text']}' is in {cur}, but "
                            f"tariff.currency is {t.currency}"))
        if t.customer_charge is not None and t.customer_charge["currency"] != t.currency:
            out.append((("tariff", "customer_charge"), f"tariff.customer_charge: '{t.customer_charge['text']}' is "
                        f"in {t.customer_charge['currency']}, but tariff.currency is {t.currency}"))
        cl = t.power_factor_clause
        per = t.demand_charge["per"]
        if cl is not None and cl.kind == "kva_demand" and per != "VA-month":
            out.append((("tariff", "demand_charge"), f"tariff.demand_charge: under a kva_demand clause the demand "
                        f"charge is per kVA-month, got '{t.demand_charge['text']}'"))
        if (cl is None or cl.kind != "kva_demand") and per != "W-month":
            out.append((("tariff", "demand_charge"), f"tariff.demand_charge: '{t.demand_charge['text']}' is per "
                        "kVA-month; that needs power_factor_clause: {kind: kva_demand}"))
        if cl is not None:
            path = ("tariff", "power_factor_clause")
            if cl.kind == "adjusted_demand" and cl.reference_power_factor is None:
                out.append((path, "tariff.power_factor_clause: adjusted_demand needs reference_power_factor"))
            if cl.kind == "kvarh_charge":
                if cl.rate is None:
                    out.append((path, "tariff.power_factor_clause: kvarh_charge needs rate, e.g. "
                                "'0.02 per kvarh' or '1.20 per kvar-month'"))
                elif cl.rate["currency"] is not None and cl.rate["currency"] != t.currency:
                    out.append((path + ("rate",), f"tariff.power_factor_clause.rate: '{cl.rate['text']}' is in "
                                f"{cl.rate['currency']}, but tariff.currency is {t.currency}"))
            fields = {"adjusted_demand": {"reference_power_factor", "form", "slope", "max_increase"},
                      "kva_demand": set(), "kvarh_charge": {"rate", "free_ratio"}}[cl.kind]
            for key in sorted(cl.model_fields_set - fields - {"kind"}):
                out.append((path + (key,), f"tariff.power_factor_clause.{key} does not apply to {cl.kind}"))
    if e is not None:
        if t is None:
            out.append((("economics",), "economics needs a tariff (the prices of demand and energy)"))
        elif not e.installed_cost.get("from_bom") and e.installed_cost["currency"] != t.currency:
            out.append((("economics", "installed_cost"), f"economics.installed_cost: '{e.installed_cost['text']}' "
                        f"is in {e.installed_cost['currency']}, but tariff.currency is {t.currency}"))
    corr = m.correction
    sd = getattr(corr, "step_design", None)
    if sd is not None and sd.cost is not None:
        want = t.currency if t is not None else sd.cost.fixed["currency"]
        for key in ("fixed", "per_kvar", "per_step"):
            cur = getattr(sd.cost, key)["currency"]
            if cur != want:
                out.append((("correction", "step_design", "cost", key),
                            f"correction.step_design.cost.{key}: '{getattr(sd.cost, key)['text']}' is in {cur}, "
                            f"but the project's currency is {want}"))
    return out
