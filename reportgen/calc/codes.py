"""Rule tables used by protection, wiring and discharge checks, kept as data.

Every table and rule names its clause, the edition followed, and a
confidence mark:

* ``published (secondary source)`` -- the values were checked against a
  public secondary source that reproduces the table (not the standard
  itself);
* ``from memory`` -- recalled, not checked against any source;
* ``common practice`` -- a design habit of the trade, not a code rule.

The NEC edition followed is NFPA 70-2023. IEC values follow IEC 60831-1:2014
(low voltage), IEC 60871-1:2014 (high voltage), IEC 60269-1 (fuse ratings)
and IEC 60364-5-52 (cable current-carrying capacities).

These tables are a design aid, not a substitute for the standards: the
authority having jurisdiction, the local code and the utility's rules govern,
and a licensed engineer must check every design. Table text is summarised in
plain words; no standard text is reproduced.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from reportgen.calc.errors import CalcError

PUBLISHED_SECONDARY = "published (secondary source)"
FROM_MEMORY = "from memory"
COMMON_PRACTICE = "common practice"

NEC_EDITION = "NFPA 70 (NEC) 2023"
IEC_LV_EDITION = "IEC 60831-1:2014"
IEC_HV_EDITION = "IEC 60871-1:2014"

RULE_SETS = ("nec", "iec")


def check_rules(rules: str) -> str:
    """Return ``rules`` lower-cased, or raise :class:`CalcError` if unknown."""
    r = str(rules).lower()
    if r not in RULE_SETS:
        raise CalcError(f"unknown rule set {rules!r}: use one of {', '.join(RULE_SETS)}")
    return r


# ---------------------------------------------------------------------------
# Scalar rules
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Rule:
    """One rule: a factor or limit with its clause, edition and confidence."""

    key: str
    value: float
    clause: str
    edition: str
    confidence: str
    summary: str

    def as_dict(self) -> dict:
        return {
            "key": self.key,
            "value": float(self.value),
            "clause": self.clause,
            "edition": self.edition,
            "confidence": self.confidence,
            "summary": self.summary,
        }


NEC_460_8A = Rule(
    "nec_conductor_factor", 1.35, "NEC 460.8(A)", NEC_EDITION, PUBLISHED_SECONDARY,
    "capacitor circuit conductors: ampacity at least 135 % of the capacitor's rated current",
)
NEC_460_8B = Rule(
    "nec_ocpd_each_conductor", 1.0, "NEC 460.8(B)", NEC_EDITION, PUBLISHED_SECONDARY,
    "an overcurrent device in each ungrounded conductor, rated as low as practicable",
)
NEC_460_8C = Rule(
    "nec_disconnect_factor", 1.35, "NEC 460.8(C)", NEC_EDITION, PUBLISHED_SECONDARY,
    "disconnecting means opens all ungrounded conductors together and is rated at least "
    "135 % of the capacitor's rated current; not required on the load side of a motor controller",
)
NEC_460_9 = Rule(
    "nec_motor_overload", 1.0, "NEC 460.9", NEC_EDITION, PUBLISHED_SECONDARY,
    "a capacitor on the load side of a motor overload device: set the overload on the improved "
    "power factor current; the capacitor is ignored when sizing motor circuit conductors",
)
NEC_240_4B = Rule(
    "nec_next_size_up_limit_a", 800.0, "NEC 240.4(B)", NEC_EDITION, FROM_MEMORY,
    "where the ampacity is not a standard rating, the next higher standard rating may be used "
    "up to 800 A",
)
IEC_CONTINUOUS = Rule(
    "iec_continuous_current_factor", 1.3, "IEC 60831-1:2014 (maximum permissible current)",
    IEC_LV_EDITION, PUBLISHED_SECONDARY,
    "units withstand 1.3 times the current at rated sinusoidal voltage and frequency continuously",
)
IEC_SIZING = Rule(
    "iec_sizing_factor", 1.5, "IEC 60831-1:2014 with capacitance tolerance", IEC_LV_EDITION,
    COMMON_PRACTICE,
    "cables and switchgear sized for 1.3 times rated current times the capacitance tolerance: "
    "1.43 to 1.5 times rated current; 1.5 used by default",
)
IEC_SIZING_RANGE = (1.43, 1.5)
IEC_60364_433 = Rule(
    "iec_overload_conventional", 1.45, "IEC 60364-4-43, 433.1", "IEC 60364-4-43:2008", FROM_MEMORY,
    "overload protection of a cable: rated current of the device at most the cable's "
    "current-carrying capacity Iz, and the conventional operating current at most 1.45 Iz",
)

FUSE_MULTIPLE = Rule(
    "fuse_multiple", 1.65, "capacitor-duty fusing", "-", COMMON_PRACTICE,
    "fuses for capacitor circuits are rated 1.65 to 2.5 times the capacitor's rated current to "
    "ride through inrush and harmonic current; 1.65 used by default, rounded up to the next "
    "standard rating",
)
FUSE_MULTIPLE_RANGE = (1.65, 2.5)


@dataclass(frozen=True)
class DischargeRule:
    """Residual voltage limit after disconnection."""

    rules: str
    v_max_v: float  # applies to units rated at most this voltage (inf for the high-voltage rule)
    v_limit_v: float
    t_limit_s: float
    clause: str
    edition: str
    confidence: str

    def as_dict(self) -> dict:
        return {
            "rules": self.rules,
            "v_limit_v": self.v_limit_v,
            "t_limit_s": self.t_limit_s,
            "clause": self.clause,
            "edition": self.edition,
            "confidence": self.confidence,
        }


DISCHARGE_RULES: tuple[DischargeRule, ...] = (
    DischargeRule("nec", 1000.0, 50.0, 60.0, "NEC 460.6(A)", NEC_EDITION, PUBLISHED_SECONDARY),
    # Clause number 460.28 from memory; the rule itself is in Cal. Title 8 §2893 (secondary).
    DischargeRule("nec", math.inf, 50.0, 300.0, "NEC 460.28", NEC_EDITION,
                  PUBLISHED_SECONDARY + "; clause number " + FROM_MEMORY),
    DischargeRule("iec", 1000.0, 75.0, 180.0, "IEC 60831-1:2014 (discharge device)",
                  IEC_LV_EDITION, PUBLISHED_SECONDARY),
    DischargeRule("iec", math.inf, 75.0, 600.0, "IEC 60871-1:2014 (discharge device)",
                  IEC_HV_EDITION, PUBLISHED_SECONDARY),
)


def discharge_rule(rules: str, v_rated_v: float) -> DischargeRule:
    """The residual-voltage rule that applies to a unit of rated voltage ``v_rated_v``.

    Parameters
    ----------
    rules : {"nec", "iec"}
        Rule set.
    v_rated_v : float
        Rated voltage of the unit (line-to-line for three-phase units), V.

    Returns
    -------
    DischargeRule
        The first rule of that set whose voltage range includes ``v_rated_v``.
    """
    r = check_rules(rules)
    for rule in DISCHARGE_RULES:
        if rule.rules == r and v_rated_v <= rule.v_max_v:
            return rule
    raise AssertionError("unreachable")  # pragma: no cover


# ---------------------------------------------------------------------------
# Standard ratings
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class RatingTable:
    """A list of standard ratings (A), in ascending order."""

    name: str
    clause: str
    edition: str
    confidence: str
    ratings_a: tuple[float, ...]

    def next_at_least(self, need_a: float) -> float:
        """Smallest standard rating that is at least ``need_a``.

        Raises
        ------
        CalcError
            When ``need_a`` exceeds the largest rating in the table.
        """
        if not math.isfinite(need_a) or need_a < 0:
            raise CalcError(f"{self.name}: required rating {need_a!r} A is not a positive number")
        for r in self.ratings_a:
            if r >= need_a - 1e-9:
                return float(r)
        raise CalcError(
            f"{self.name}: no standard rating of at least {need_a:.1f} A "
            f"(largest listed {self.ratings_a[-1]:g} A, {self.clause}); split the circuit"
        )

    def as_dict(self) -> dict:
        return {
            "name": self.name,
            "clause": self.clause,
            "edition": self.edition,
            "confidence": self.confidence,
            "ratings_a": [float(r) for r in self.ratings_a],
        }


# NEC 240.6(A): standard ampere ratings of fuses and inverse-time breakers.
NEC_STANDARD_RATINGS = RatingTable(
    "NEC standard ampere ratings", "NEC 240.6(A)", NEC_EDITION, PUBLISHED_SECONDARY,
    (15, 20, 25, 30, 35, 40, 45, 50, 60, 70, 80, 90, 100, 110, 125, 150, 175, 200, 225, 250,
     300, 350, 400, 450, 500, 600, 700, 800, 1000, 1200, 1600, 2000, 2500, 3000, 4000, 5000, 6000),
)
# 240.6(A) also lists 1, 3, 6, 10 and 601 A as additional standard fuse ratings.
NEC_EXTRA_FUSE_RATINGS_A = (1, 3, 6, 10, 601)
NEC_FUSE_RATINGS = RatingTable(
    "NEC standard fuse ratings", "NEC 240.6(A)", NEC_EDITION, PUBLISHED_SECONDARY,
    tuple(sorted(set(NEC_STANDARD_RATINGS.ratings_a) | set(NEC_EXTRA_FUSE_RATINGS_A))),
)
# IEC 60269-1 preferred ratings of gG fuse-links.
IEC_GG_FUSE_RATINGS = RatingTable(
    "IEC gG fuse ratings", "IEC 60269-1 (preferred rated currents)", "IEC 60269-1", FROM_MEMORY,
    (2, 4, 6, 10, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630,
     800, 1000, 1250),
)
# Disconnect switch ampere ratings offered by the trade (NEMA KS 1 frame sizes, from memory).
NEC_SWITCH_RATINGS = RatingTable(
    "disconnect switch ratings", "NEMA KS 1 switch sizes", "-", COMMON_PRACTICE,
    (30, 60, 100, 200, 400, 600, 800, 1200, 1600, 2000, 2500, 3000, 4000),
)
IEC_SWITCH_RATINGS = RatingTable(
    "switch-disconnector ratings", "IEC 60947-3 (R10 preferred numbers)", "-", COMMON_PRACTICE,
    (16, 20, 25, 32, 40, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250,
     1600, 2000, 2500, 3150),
)


def fuse_table(rules: str) -> RatingTable:
    """Standard fuse ratings for a rule set ("nec": 240.6(A); "iec": gG ratings)."""
    return NEC_FUSE_RATINGS if check_rules(rules) == "nec" else IEC_GG_FUSE_RATINGS


def switch_table(rules: str) -> RatingTable:
    """Standard disconnect ratings for a rule set."""
    return NEC_SWITCH_RATINGS if check_rules(rules) == "nec" else IEC_SWITCH_RATINGS


# NEC 240.4(D): small-conductor overcurrent limits (material, size) -> A.
NEC_SMALL_CONDUCTOR_OCPD_A = {
    ("cu", "14 AWG"): 15.0,
    ("cu", "12 AWG"): 20.0,
    ("cu", "10 AWG"): 30.0,
    ("al", "12 AWG"): 15.0,
    ("al", "10 AWG"): 25.0,
}
NEC_240_4D = ("NEC 240.4(D)", NEC_EDITION, PUBLISHED_SECONDARY)


def gg_conventional_factor(i_n_a: float) -> float:
    """Conventional fusing current of a gG fuse-link as a multiple of its rating.

    IEC 60269-2 (from memory): 1.6 for 16 A and above, 1.9 above 4 A up to
    16 A, 2.1 up to 4 A.
    """
    if i_n_a >= 16:
        return 1.6
    if i_n_a > 4:
        return 1.9
    return 2.1


# ---------------------------------------------------------------------------
# Conductor ampacity tables
# ---------------------------------------------------------------------------

NEC_SIZES = (
    "14 AWG", "12 AWG", "10 AWG", "8 AWG", "6 AWG", "4 AWG", "3 AWG", "2 AWG", "1 AWG",
    "1/0 AWG", "2/0 AWG", "3/0 AWG", "4/0 AWG", "250 kcmil", "300 kcmil", "350 kcmil",
    "400 kcmil", "500 kcmil", "600 kcmil", "700 kcmil", "750 kcmil", "800 kcmil", "900 kcmil",
    "1000 kcmil",
)

# Table 310.16 (2023), not more than three current-carrying conductors, 30 °C ambient.
# Columns 60 °C, 75 °C, 90 °C. Copper 75 °C: two secondary sources agree (REFERENCES §3).
# The other columns: one secondary source reproducing the 2023 table (wiresizes.com
# "NEC Table 310.16, 2023 edition"); 700, 800 and 900 kcmil rows are not in that source
# and are from memory.
_CU = {
    "14 AWG": (15, 20, 25), "12 AWG": (20, 25, 30), "10 AWG": (30, 35, 40),
    "8 AWG": (40, 50, 55), "6 AWG": (55, 65, 75), "4 AWG": (70, 85, 95),
    "3 AWG": (85, 100, 115), "2 AWG": (95, 115, 130), "1 AWG": (110, 130, 145),
    "1/0 AWG": (125, 150, 170), "2/0 AWG": (145, 175, 195), "3/0 AWG": (165, 200, 225),
    "4/0 AWG": (195, 230, 260), "250 kcmil": (215, 255, 290), "300 kcmil": (240, 285, 320),
    "350 kcmil": (260, 310, 350), "400 kcmil": (280, 335, 380), "500 kcmil": (320, 380, 430),
    "600 kcmil": (350, 420, 475), "700 kcmil": (385, 460, 520), "750 kcmil": (400, 475, 535),
    "800 kcmil": (410, 490, 555), "900 kcmil": (435, 520, 585), "1000 kcmil": (455, 545, 615),
}
_AL = {
    "12 AWG": (15, 20, 25), "10 AWG": (25, 30, 35), "8 AWG": (35, 40, 45),
    "6 AWG": (40, 50, 55), "4 AWG": (55, 65, 75), "3 AWG": (65, 75, 85),
    "2 AWG": (75, 90, 100), "1 AWG": (85, 100, 115), "1/0 AWG": (100, 120, 135),
    "2/0 AWG": (115, 135, 150), "3/0 AWG": (130, 155, 175), "4/0 AWG": (150, 180, 205),
    "250 kcmil": (170, 205, 230), "300 kcmil": (195, 230, 260), "350 kcmil": (210, 250, 280),
    "400 kcmil": (225, 270, 305), "500 kcmil": (260, 310, 350), "600 kcmil": (285, 340, 385),
    "700 kcmil": (315, 375, 425), "750 kcmil": (320, 385, 435), "800 kcmil": (330, 395, 445),
    "900 kcmil": (355, 425, 480), "1000 kcmil": (375, 445, 500),
}
_NEC_FROM_MEMORY_ROWS = ("700 kcmil", "800 kcmil", "900 kcmil")

IEC_SIZES = (
    "1.5 mm2", "2.5 mm2", "4 mm2", "6 mm2", "10 mm2", "16 mm2", "25 mm2", "35 mm2", "50 mm2",
    "70 mm2", "95 mm2", "120 mm2", "150 mm2", "185 mm2", "240 mm2", "300 mm2",
)
# IEC 60364-5-52 Tables B.52.4 (PVC, 70 °C) and B.52.5 (XLPE/EPR, 90 °C), reference method C
# (clipped direct), three loaded copper conductors, 30 °C ambient air. From memory.
_IEC_CU_C = {
    70: (17.5, 24, 32, 41, 57, 76, 96, 119, 144, 184, 223, 259, 299, 341, 403, 464),
    90: (22, 30, 40, 51, 70, 94, 119, 148, 180, 232, 282, 328, 379, 434, 514, 593),
}


@dataclass(frozen=True)
class AmpacityTable:
    """Allowable ampacity per conductor size for one material and temperature column."""

    system: str  # "nec" (AWG/kcmil) or "iec" (mm2)
    material: str  # "cu" or "al"
    insulation_temp_c: int
    sizes: tuple[str, ...]
    ampacity_a: tuple[float, ...]
    clause: str
    edition: str
    confidence: str
    parallel_min_size: str
    basis: str
    from_memory_sizes: tuple[str, ...] = field(default=())

    def ampacity(self, size: str) -> float:
        """Table ampacity of ``size`` (A)."""
        try:
            return float(self.ampacity_a[self.sizes.index(size)])
        except ValueError:
            raise CalcError(
                f"conductor size {size!r} is not in {self.clause} for {self.material} "
                f"{self.insulation_temp_c} °C"
            ) from None

    def as_dict(self) -> dict:
        return {
            "system": self.system,
            "material": self.material,
            "insulation_temp_c": self.insulation_temp_c,
            "sizes": list(self.sizes),
            "ampacity_a": [float(a) for a in self.ampacity_a],
            "clause": self.clause,
            "edition": self.edition,
            "confidence": self.confidence,
            "basis": self.basis,
        }


def _nec_table(material: str, rows: dict, col: int, temp: int) -> AmpacityTable:
    sizes = tuple(s for s in NEC_SIZES if s in rows)
    conf = PUBLISHED_SECONDARY
    if material == "cu" and temp == 75:
        conf = PUBLISHED_SECONDARY + " (two sources agree)"
    return AmpacityTable(
        "nec", material, temp, sizes, tuple(float(rows[s][col]) for s in sizes),
        "NEC Table 310.16", NEC_EDITION,
        conf + "; 700, 800, 900 kcmil " + FROM_MEMORY,
        "1/0 AWG",
        "not more than three current-carrying conductors in raceway, cable or earth, 30 °C ambient",
        _NEC_FROM_MEMORY_ROWS,
    )


AMPACITY_TABLES: dict[tuple[str, str, int], AmpacityTable] = {}
for _i, _t in enumerate((60, 75, 90)):
    AMPACITY_TABLES[("nec", "cu", _t)] = _nec_table("cu", _CU, _i, _t)
    AMPACITY_TABLES[("nec", "al", _t)] = _nec_table("al", _AL, _i, _t)
for _t, _vals in _IEC_CU_C.items():
    AMPACITY_TABLES[("iec", "cu", _t)] = AmpacityTable(
        "iec", "cu", _t, IEC_SIZES, tuple(float(v) for v in _vals),
        "IEC 60364-5-52 Table " + ("B.52.4" if _t == 70 else "B.52.5") + ", method C",
        "IEC 60364-5-52:2009", FROM_MEMORY, "50 mm2",
        "three loaded copper conductors, reference method C (clipped direct), 30 °C ambient air",
    )

CONDUCTOR_TEMPS = {"nec": (60, 75, 90), "iec": (70, 90)}
CONDUCTOR_MATERIALS = {"nec": ("cu", "al"), "iec": ("cu",)}
DEFAULT_INSULATION_TEMP_C = {"nec": 75, "iec": 70}


def ampacity_table(rules: str, material: str, insulation_temp_c: int) -> AmpacityTable:
    """The ampacity table for a rule set, conductor material and temperature rating.

    Parameters
    ----------
    rules : {"nec", "iec"}
        "nec": NEC Table 310.16 (AWG/kcmil, copper or aluminium, 60/75/90 °C);
        "iec": IEC 60364-5-52 method C (mm², copper, 70 °C PVC or 90 °C XLPE).
    material : {"cu", "al"}
        Conductor material.
    insulation_temp_c : int
        Conductor temperature rating, °C.
    """
    r = check_rules(rules)
    m = str(material).lower()
    if m not in CONDUCTOR_MATERIALS[r]:
        raise CalcError(
            f"conductor material {material!r} is not available for rule set {r!r} "
            f"(choose {', '.join(CONDUCTOR_MATERIALS[r])})"
        )
    t = int(insulation_temp_c)
    if t not in CONDUCTOR_TEMPS[r]:
        raise CalcError(
            f"conductor temperature rating {insulation_temp_c!r} °C is not a column of the "
            f"{r} table (choose {', '.join(str(x) for x in CONDUCTOR_TEMPS[r])})"
        )
    return AMPACITY_TABLES[(r, m, t)]


# ---------------------------------------------------------------------------
# Correction and adjustment factors
# ---------------------------------------------------------------------------

# NEC 310.15(B)(1) (Table 310.15(B)(1)(1) in the 2023 numbering, from memory), 30 °C basis.
# Rows: (highest ambient of the row in °C, factor at 60, 75, 90 °C). None: not permitted.
NEC_AMBIENT_ROWS: tuple[tuple[float, tuple[float | None, float | None, float | None]], ...] = (
    (10, (1.29, 1.20, 1.15)),
    (15, (1.22, 1.15, 1.12)),
    (20, (1.15, 1.11, 1.08)),
    (25, (1.08, 1.05, 1.04)),
    (30, (1.00, 1.00, 1.00)),
    (35, (0.91, 0.94, 0.96)),
    (40, (0.82, 0.88, 0.91)),
    (45, (0.71, 0.82, 0.87)),
    (50, (0.58, 0.75, 0.82)),
    (55, (0.41, 0.67, 0.76)),
    (60, (None, 0.58, 0.71)),
    (65, (None, 0.47, 0.65)),
    (70, (None, 0.33, 0.58)),
    (75, (None, None, 0.50)),
    (80, (None, None, 0.41)),
    (85, (None, None, 0.29)),
)
NEC_AMBIENT_SOURCE = (
    "NEC 310.15(B)(1)", NEC_EDITION,
    PUBLISHED_SECONDARY + " up to 60 °C; rows above 60 °C " + FROM_MEMORY,
)
# IEC 60364-5-52 Table B.52.14, ambient air other than 30 °C (from memory).
IEC_AMBIENT_ROWS: tuple[tuple[float, tuple[float | None, float | None]], ...] = (
    (10, (1.22, 1.15)),
    (15, (1.17, 1.12)),
    (20, (1.12, 1.08)),
    (25, (1.06, 1.04)),
    (30, (1.00, 1.00)),
    (35, (0.94, 0.96)),
    (40, (0.87, 0.91)),
    (45, (0.79, 0.87)),
    (50, (0.71, 0.82)),
    (55, (0.61, 0.76)),
    (60, (0.50, 0.71)),
    (65, (None, 0.65)),
    (70, (None, 0.58)),
    (75, (None, 0.50)),
    (80, (None, 0.41)),
)
IEC_AMBIENT_SOURCE = ("IEC 60364-5-52 Table B.52.14", "IEC 60364-5-52:2009", FROM_MEMORY)

# NEC 310.15(C)(1): more than three current-carrying conductors. (highest count, factor).
NEC_BUNDLING_ROWS = ((3, 1.00), (6, 0.80), (9, 0.70), (20, 0.50), (30, 0.45), (40, 0.40),
                     (math.inf, 0.35))
NEC_BUNDLING_SOURCE = ("NEC 310.15(C)(1)", NEC_EDITION, PUBLISHED_SECONDARY)
# IEC 60364-5-52 Table B.52.17 item 1 (bunched in air, on a surface, embedded or enclosed):
# number of circuits -> factor (from memory). Counts between rows use the next listed count.
IEC_GROUPING_ROWS = ((1, 1.00), (2, 0.80), (3, 0.70), (4, 0.65), (5, 0.60), (6, 0.57),
                     (7, 0.54), (8, 0.52), (9, 0.50), (12, 0.45), (16, 0.41), (math.inf, 0.38))
IEC_GROUPING_SOURCE = ("IEC 60364-5-52 Table B.52.17", "IEC 60364-5-52:2009", FROM_MEMORY)


def ambient_factor(rules: str, insulation_temp_c: int, ambient_c: float) -> tuple[float, str]:
    """Ambient temperature correction factor (30 °C basis) and the row used.

    The row is the first whose upper temperature is at least ``ambient_c``
    (a non-integer ambient falls in the next warmer row, the conservative side).

    Returns
    -------
    (factor, row) : (float, str)
        The factor and a description of the row, for the calculation sheet.
    """
    r = check_rules(rules)
    temps = CONDUCTOR_TEMPS[r]
    col = temps.index(int(insulation_temp_c)) if int(insulation_temp_c) in temps else None
    if col is None:
        raise CalcError(f"no ambient correction column for {insulation_temp_c} °C conductors")
    rows = NEC_AMBIENT_ROWS if r == "nec" else IEC_AMBIENT_ROWS
    lo = -math.inf
    for hi, facs in rows:
        if ambient_c <= hi:
            f = facs[col]
            if f is None:
                break
            if r == "nec":
                desc = f"{'≤' + str(hi) if lo == -math.inf else str(int(lo) + 1) + '–' + str(hi)} °C"
            else:
                desc = f"{hi} °C"
            return float(f), desc
        lo = hi
    raise CalcError(
        f"ambient {ambient_c:g} °C is beyond the correction table for {insulation_temp_c} °C "
        f"conductors; choose a higher temperature rating or a cooler route"
    )


def bundling_factor(rules: str, count: int) -> tuple[float, str]:
    """Adjustment factor for grouped conductors.

    Parameters
    ----------
    rules : {"nec", "iec"}
        "nec": ``count`` is the number of current-carrying conductors in the
        raceway or cable (NEC 310.15(C)(1)); "iec": ``count`` is the number of
        circuits bunched together (IEC 60364-5-52 Table B.52.17).
    count : int
        Conductors (nec) or circuits (iec), at least 1.
    """
    r = check_rules(rules)
    n = int(count)
    if n < 1:
        raise CalcError(f"grouped conductor count must be at least 1, not {count!r}")
    rows = NEC_BUNDLING_ROWS if r == "nec" else IEC_GROUPING_ROWS
    for hi, f in rows:
        if n <= hi:
            return float(f), f"{n} {'current-carrying conductors' if r == 'nec' else 'circuits'}"
    raise AssertionError("unreachable")  # pragma: no cover


def size_index(rules: str, size: str) -> int:
    """Position of a conductor size in the rule set's size order."""
    sizes = NEC_SIZES if check_rules(rules) == "nec" else IEC_SIZES
    try:
        return sizes.index(size)
    except ValueError:
        raise CalcError(
            f"unknown conductor size {size!r} for rule set {rules!r} "
            f"(examples: {sizes[0]!r}, {sizes[-1]!r})"
        ) from None
