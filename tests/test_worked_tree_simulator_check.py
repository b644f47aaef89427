"""The tree simulator-check worked example (worked/tree_simulator_check) against outside values.

tests/test_worked.py checks that run.py prints expected.txt; here the story's numbers are tied to
values computed independently in this file: the demo cell's Laplace-domain impedances written out
by hand from the cable equation's two-port formulas (Rall 1959 [Rall1959]; the recursion of Koch &
Poggio 1985 [KochPoggio1985]) in mpmath and inverted with mpmath's own Talbot routine (an
independent general-purpose library [mpmath2023]), not with the package's tree solver.
"""

from __future__ import annotations

import pathlib

import mpmath as mp
import pytest
from worked_runner import run_worked

ROOT = pathlib.Path(__file__).resolve().parents[1]
FOLDER = ROOT / "worked" / "tree_simulator_check"
RM, RI, CM = mp.mpf(2), mp.mpf(2), mp.mpf("0.01")  # SI
TAU = RM * CM
UM = mp.mpf("1e-6")  # module constants at the default precision; the checks raise it with workdps
# the demo outline: (length, diameter) in µm; the soma a sphere of 20 µm diameter
TRUNK, MIDDLE, TIP = (300, 4), (300, mp.mpf("2.51984209979")), (200, mp.mpf("1.58740105197"))
SOMA_AREA = mp.pi * (20 * UM) ** 2


def _g_inf(d):
    return mp.pi * (d * UM) ** mp.mpf(1.5) / (2 * mp.sqrt(RM * RI))


def _electrotonic(length, d):
    return length * UM / mp.sqrt(RM * d * UM / (4 * RI))


def _into(piece, far_load, s):
    """Admittance looking into a cylinder whose far end is loaded by ``far_load`` (Rall 1959)."""
    length, d = piece
    g, q = _g_inf(d), mp.sqrt(1 + s * TAU)
    t = mp.tanh(q * _electrotonic(length, d))
    return g * q * (far_load + g * q * t) / (g * q + far_load * t)


def _ratio(piece, far_load, s):
    """V_far / V_near across a cylinder whose far end is loaded by ``far_load``."""
    length, d = piece
    g, q = _g_inf(d), mp.sqrt(1 + s * TAU)
    u = q * _electrotonic(length, d)
    return 1 / (mp.cosh(u) + far_load / (g * q) * mp.sinh(u))


def _tip_and_soma(s):
    """(input impedance at the tip of right.b, transfer impedance from that tip to the soma), Ω."""
    soma = SOMA_AREA / RM * (1 + s * TAU)
    sealed_tip = _into(TIP, 0, s)
    left = _into(MIDDLE, 2 * sealed_tip, s)  # 'left' with its two sealed daughters
    trunk_end = soma_side = _into(TRUNK, soma, s)  # the trunk looked into from its far end, the soma beyond
    right_end = _into(MIDDLE, left + soma_side, s) + sealed_tip  # at right's far node: back down 'right', and right.a
    z_tip = 1 / _into(TIP, right_end, s)
    # back to the soma: right.b (tip to right's far node), right (to the trunk's far node), trunk (to the soma)
    ratio = (_ratio(TIP, right_end, s) * _ratio(MIDDLE, left + trunk_end, s) * _ratio(TRUNK, soma, s))
    return z_tip, z_tip * ratio


def _alpha_at_tip(t):
    """V at the tip of right.b for the story's alpha current (50 pA peak, 0.5 ms to peak), V."""
    peak, tp = mp.mpf("50e-12"), mp.mpf("0.5e-3")
    return mp.invertlaplace(lambda s: _tip_and_soma(s)[0] * mp.e * peak / (tp * (s + 1 / tp) ** 2), t,
                            method="talbot")


@pytest.fixture(scope="module")
def output() -> str:
    run = run_worked(FOLDER.name)  # in this process (tests/worked_runner.py), shared with test_worked.py
    assert run.returncode == 0, run.stderr  # coarse run flagged, finest run passed, advice given
    return run.stdout


def test_the_exact_tip_voltages_of_the_story_are_mpmaths(output):
    """The worst errors sit at the tip of right.b; their 'exact' values are the alpha response there."""
    with mp.workdps(30):
        early, later = (float(_alpha_at_tip(mp.mpf(t))) for t in ("0.25e-3", "0.5e-3"))
    assert f"exact {early * 1e3:.3g} mV" == "exact 2.45 mV"
    assert "(1.250 ms in the file; line 11: simulated 2.44 mV, exact 2.45 mV)" in output
    assert f"exact {later * 1e3:.3g} mV" == "exact 4.71 mV"
    assert "(1.500 ms in the file; line 12: simulated 4.33 mV, exact 4.71 mV)" in output


def test_the_advised_peaks_are_mpmaths_step_responses(output):
    """For a 1 A step the voltage rises monotonically, so its peak in the 11 ms window is its value at
    11 ms: at the tip (input impedance) and at the soma (transfer impedance), inverted with Talbot."""
    with mp.workdps(30):
        end = mp.mpf("11e-3")
        tip = mp.invertlaplace(lambda s: _tip_and_soma(s)[0] / s, end, method="talbot")
        soma = mp.invertlaplace(lambda s: _tip_and_soma(s)[1] / s, end, method="talbot")
        z_tip, _ = _tip_and_soma(mp.mpf(0))
    assert f"exact peak V/I at point right.b        {float(tip) / 1e6:.4g} MΩ" in output
    assert f"exact peak V/I at the soma             {float(soma) / 1e6:.4g} MΩ" in output
    assert tip < z_tip  # still charging at 11 ms (τm = 20 ms): below the input resistance


def test_the_story_holds(output):
    verdicts = [line.split()[1] for line in output.splitlines() if line.strip().startswith("verdict")]
    assert verdicts == ["FAIL", "FAIL", "FAIL", "PASS"]
    space = next(line for line in output.splitlines() if line.strip().startswith("space"))
    assert float(space.split()[1].rstrip(",")) == pytest.approx(2.0, abs=0.1)  # [CP] three-point difference
    assert "matches" in space
