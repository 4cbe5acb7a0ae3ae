"""AC network solutions against ngspice AC analysis (outside reference: ngspice, Debian package).

Each case solves a load with reportgen's phasor core and the same circuit in
ngspice; impedance, current, P and Q must agree to 1e-6 relative.
"""

import cmath
import math

import pytest

import spice
from reportgen.calc import loads as L
from reportgen.calc import network as net

REL = 1e-6

# Branch used by several cases: 3.3 ohm + ((12 ohm + 22 mH) || 150 uF)
BRANCH = net.Series((net.R(3.3), net.Parallel((net.Series((net.R(12.0), net.L(22e-3))), net.C(150e-6)))))


def branch_spice(a: str, b: str, tag: str) -> str:
    """The same branch as a netlist between nodes a and b."""
    return (f"R1{tag} {a} m{tag} 3.3\n"
            f"R2{tag} m{tag} k{tag} 12\n"
            f"L2{tag} k{tag} {b} 22m\n"
            f"C3{tag} m{tag} {b} 150u\n")


def test_single_phase_network_with_parallel_branch():
    f, v = 60.0, 230.0
    deck = "V1 in 0 AC 230 0\n" + branch_spice("in", "0", "a")
    _, res = spice.ac(deck, ["v(in)", "i(V1)"], f)
    i_spice = -res["i(V1)"][0]  # ngspice: source current is positive into the + terminal
    z_spice = res["v(in)"][0] / i_spice
    s_spice = res["v(in)"][0] * i_spice.conjugate()

    z = net.impedance(BRANCH, 2 * math.pi * f)
    assert z == pytest.approx(z_spice, rel=REL)
    lp = L.network("branch", 1, v, f, BRANCH)
    assert lp.current_a == pytest.approx(abs(i_spice), rel=REL)
    assert lp.p_w == pytest.approx(s_spice.real, rel=REL)
    assert lp.q_var == pytest.approx(s_spice.imag, rel=REL)
    assert math.copysign(1, lp.q_var) == math.copysign(1, z.imag)  # Q > 0 exactly when inductive


def _three_phase_sources(v_ll: float) -> str:
    v_ph = v_ll / math.sqrt(3)
    return (f"VA a 0 AC {v_ph!r} 0\n"
            f"VB b 0 AC {v_ph!r} -120\n"
            f"VC c 0 AC {v_ph!r} 120\n")


def _three_phase_power(res) -> tuple[complex, float]:
    s = 0j
    for ph in "abc":
        i_line = -res[f"i(V{ph.upper()})"][0]
        s += res[f"v({ph})"][0] * i_line.conjugate()
    return s, abs(-res["i(VA)"][0])


@pytest.mark.parametrize("connection", ["wye", "delta"])
def test_three_phase_network(connection):
    f, v_ll = 50.0, 400.0
    deck = _three_phase_sources(v_ll)
    if connection == "wye":
        # each branch from a line to a floating star point n
        for ph in "abc":
            deck += branch_spice(ph, "n", ph)
        deck += "Rn n 0 1e9\n"  # keeps the star point defined for the solver; carries no current
    else:
        for x, y in ("ab", "bc", "ca"):
            deck += branch_spice(x, y, x + y)
    vectors = ["v(a)", "v(b)", "v(c)", "i(VA)", "i(VB)", "i(VC)"]
    _, res = spice.ac(deck, vectors, f)
    s_spice, i_line = _three_phase_power(res)

    lp = L.network("branch", 3, v_ll, f, BRANCH, connection)
    assert lp.p_w == pytest.approx(s_spice.real, rel=REL)
    assert lp.q_var == pytest.approx(s_spice.imag, rel=REL)
    assert lp.current_a == pytest.approx(i_line, rel=REL)


def test_capacitive_network_has_negative_q():
    # 10 ohm in series with 100 uF at 50 Hz: X_C = 31.83 ohm, capacitive -> Q < 0 (our sign convention)
    node = net.Series((net.R(10.0), net.C(100e-6)))
    deck = "V1 in 0 AC 100 0\nR1 in m 10\nC1 m 0 100u\n"
    _, res = spice.ac(deck, ["v(in)", "i(V1)"], 50.0)
    i = -res["i(V1)"][0]
    s = res["v(in)"][0] * i.conjugate()
    lp = L.network("rc", 1, 100.0, 50.0, node)
    assert lp.q_var == pytest.approx(s.imag, rel=REL)
    assert lp.q_var < 0
    assert cmath.phase(i) > 0  # the current leads
