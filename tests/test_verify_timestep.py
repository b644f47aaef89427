"""Time-step advice for a time course (``advise_cable(..., "time-course")`` and ``advise --scheme``).

Outside references named beside each check:

* the orders in Δt: first for backward Euler, second for Crank–Nicolson (Crank & Nicolson 1947,
  Proc. Camb. Phil. Soc. 43:50 [CrankNicolson1947]; standard numerical analysis), so halving the time share of the
  target shrinks Δt by 2 and by √2;
* the exact course of a sealed cylinder after a current step at the origin from the
  independently written Rall (1969) [Rall1969] cosine series (``verify.sealed_step_voltage``), and for the
  other cases ``transient.charge`` (itself checked against computed values in
  test_verify_transient.py);
* the demo cable of docs/sources.md (Rm 20 kΩ·cm², Ri 200 Ω·cm, Cm 1 µF/cm², d 2 µm, ℓ 500 µm:
  λ = 707.1067812 µm, τm = 20 ms).

Every recommendation is re-checked here without the advice code: ``compartment.integrate`` at
the advised compartments and Δt against the exact course.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from cabletheory import compartment as cp
from cabletheory import transient as tr
from cabletheory import verify as vf
from cabletheory.cable import Cylinder
from cabletheory.cli import main
from cabletheory.errors import InputError

UM, MS = 1e-6, 1e-3
DEMO = Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM)  # demo cable of docs/sources.md
CABLE = ["--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "500"]


def exact_course(model, site: float):
    def course(t):
        return tr.charge(model, tr.CurrentStep(1.0), t, [site], modes=0).voltage[:, 0]

    return course


def advise(times, target: float, scheme: str, model=DEMO, site: float = 500 * UM, **extra) -> vf.Advice:
    cylinder = model.cylinder if isinstance(model, tr.BallAndStick) else model
    soma = math.pi * model.soma_diameter**2 if isinstance(model, tr.BallAndStick) else 0.0
    return vf.advise_cable(cylinder, "time-course", target, site=site, soma_area=soma,
                           exact_time_course=exact_course(model, site), times=times, scheme=scheme, **extra)


def solve(cylinder: Cylinder, compartments: int, times, step: float, scheme: str, site: float,
          soma_area: float | None = None, amplitude: float = 100e-12):
    """The reference discretisation, run by hand: V(site) in V for a step of ``amplitude`` at the origin."""
    c = cp.discretise_cable(cylinder, compartments, soma_area=soma_area)
    current = np.zeros(c.size)
    current[0] = amplitude
    return cp.sample(c, cp.integrate(c, current, times, scheme=scheme, step=step), [site])[:, 0]


def relative_max_error(v, exact) -> float:
    return float(np.max(np.abs(v - exact)) / np.max(np.abs(exact)))


GRID = np.arange(0, 10.0001, 0.5) * MS  # 0 to 10 ms every 0.5 ms


@pytest.mark.parametrize(("scheme", "target"), [("backward-euler", 2e-3), ("crank-nicolson", 1e-3)])
def test_advised_step_meets_the_target_against_the_independent_series(scheme: str, target: float) -> None:
    """Sealed demo cable, far end: solve at the advised (compartments, Δt) and compare with Rall's (1969) [Rall1969]
    series (verify.sealed_step_voltage, 100 pA): within the target, and equal to the verified error."""
    a = advise(GRID, target, scheme)
    s = a.time_step
    assert s is not None
    assert s.scheme == scheme
    assert s.order == {"backward-euler": 1, "crank-nicolson": 2}[scheme]
    assert s.space_target == pytest.approx(target / 2)
    assert s.time_target == pytest.approx(target / 2)
    assert s.step * s.divisions == pytest.approx(0.5 * MS, rel=1e-12)  # Δt divides the output spacing
    v = solve(DEMO, int(a.compartments[0]), GRID, s.step, scheme, 500 * UM)
    exact, _ = vf.sealed_step_voltage(DEMO, 100e-12, GRID, np.full(GRID.size, 500 * UM), 1e-18)
    error = relative_max_error(v, exact)
    assert error <= target
    assert error == pytest.approx(s.error, rel=1e-6)
    assert s.time_error <= s.time_target
    assert a.error <= s.space_target  # the compartments meet their share with a negligible Δt
    assert s.error <= a.error + s.time_error + 1e-12  # triangle inequality: the two parts add at most


@pytest.mark.parametrize(("model", "site"), [
    (tr.BallAndStick(DEMO, 20 * UM), 250 * UM),
    (Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, end_conductance=1e-9), 500 * UM),
    (Cylinder(2.0, 2.0, 0.01, 2 * UM, 500 * UM, end_conductance=math.inf), 250 * UM),
])
def test_advised_step_meets_the_target_for_a_soma_and_other_ends(model, site: float) -> None:
    """Ball and stick, leaky and killed far ends: checked by hand against transient.charge at 100 pA."""
    a = advise(GRID, 2e-3, "backward-euler", model=model, site=site)
    s = a.time_step
    cylinder = model.cylinder if isinstance(model, tr.BallAndStick) else model
    soma = math.pi * model.soma_diameter**2 if isinstance(model, tr.BallAndStick) else None
    v = solve(cylinder, int(a.compartments[0]), GRID, s.step, "backward-euler", site, soma)
    exact = tr.charge(model, tr.CurrentStep(100e-12), GRID, [site], modes=0).voltage[:, 0]
    assert relative_max_error(v, exact) <= 2e-3
    assert relative_max_error(v, exact) == pytest.approx(s.error, rel=1e-6)


def test_advised_step_is_the_largest_that_divides_the_output_spacing() -> None:
    """With few steps per output spacing the search is exact: the advised Δt meets the time share and
    one step coarser (spacing/(m-1)) breaks it, both measured here against a Crank–Nicolson run at
    400 steps per spacing."""
    a = advise(GRID, 2e-3, "backward-euler")
    s = a.time_step
    assert 2 < s.divisions < 50
    n = int(a.compartments[0])
    reference = solve(DEMO, n, GRID, 0.5 * MS / 400, "crank-nicolson", 500 * UM)
    at = solve(DEMO, n, GRID, s.step, "backward-euler", 500 * UM)
    coarser = solve(DEMO, n, GRID, 0.5 * MS / (s.divisions - 1), "backward-euler", 500 * UM)
    # the advice's own reference is off by at most its Richardson estimate, which the search subtracts
    assert relative_max_error(at, reference) == pytest.approx(s.time_error, abs=2 * s.reference_error)
    assert relative_max_error(at, reference) <= s.time_target
    assert relative_max_error(coarser, reference) > s.time_target


@pytest.mark.parametrize(("scheme", "targets", "ratio"), [
    ("backward-euler", (2e-3, 1e-3), 2.0),  # first order: Δt ∝ error
    ("crank-nicolson", (2e-4, 1e-4), math.sqrt(2.0)),  # second order: Δt ∝ √error (Crank & Nicolson 1947)
])
def test_halving_the_target_shrinks_the_step_by_the_schemes_order(scheme, targets, ratio) -> None:
    """Δt(target)/Δt(target/2) = 2^(1/p); Δt = spacing/m with m a whole number (here m >= 15), so the
    ratio is met to within the rounding of m plus the small change of the error constant with the
    compartment count."""
    grid = np.arange(0, 20.0001, 2.0) * MS
    loose, tight = (advise(grid, t, scheme).time_step for t in targets)
    assert min(loose.divisions, tight.divisions) >= 15
    assert loose.step / tight.step == pytest.approx(ratio, rel=0.06)


def test_output_spacing_limits_the_step_and_the_order_predicts_beyond_it() -> None:
    """Crank–Nicolson at 1 % on 0..2 ms every 50 µs: the output spacing already meets the time share,
    and the step predicted from the second order (not verified by the advice) is checked here: output
    times spaced by (just under) it let Δt equal that spacing within the share."""
    times = np.arange(0, 2.00001, 0.05) * MS
    s = advise(times, 1e-2, "crank-nicolson").time_step
    assert s.limited_by_output
    assert s.divisions == 1
    assert s.step == pytest.approx(50e-6)
    assert s.step_estimate is not None
    assert s.step_estimate > s.step
    spacing = math.floor(s.step_estimate / 10e-6) * 10e-6  # round down to 10 µs
    coarse_times = np.arange(0, 21) * spacing
    wider = advise(coarse_times, 1e-2, "crank-nicolson").time_step
    assert wider.step == pytest.approx(spacing, rel=1e-9)
    assert wider.time_error <= wider.time_target


def test_a_fixed_step_is_compared_only_when_asked() -> None:
    """A fixed step of the user's choosing (here 25 µs, one example among 10, 50, 100 µs): its error
    with the advised compartments equals a hand solve; with output times it does not divide
    (every 30 µs) it is not compared; without one, nothing is compared."""
    times = np.arange(0, 2.00001, 0.05) * MS
    a = advise(times, 1e-3, "backward-euler", compare_step=25e-6)
    s = a.time_step
    assert s.compare_step == 25e-6
    v = solve(DEMO, int(a.compartments[0]), times, 25e-6, "backward-euler", 500 * UM)
    exact, _ = vf.sealed_step_voltage(DEMO, 100e-12, times, np.full(times.size, 500 * UM), 1e-18)
    assert s.compare_error == pytest.approx(relative_max_error(v, exact), rel=1e-6)
    assert s.compare_error > 1e-3  # backward Euler at 25 µs misses 0.1 % on this cable
    odd = advise(np.arange(0, 31) * 30e-6, 1e-2, "crank-nicolson", compare_step=25e-6).time_step
    assert odd.compare_step == 25e-6
    assert odd.compare_error is None
    plain = advise(np.arange(0, 31) * 30e-6, 1e-2, "crank-nicolson").time_step
    assert plain.compare_step is None
    assert plain.compare_error is None


@pytest.mark.parametrize(("extra", "fragment"), [
    ({"scheme": "forward-euler"}, "scheme 'forward-euler'"),
    ({"space_share": 1.0}, "space share"),
    ({"space_share": 0.0}, "space share"),
    ({"compare_step": -25e-6}, "time step to compare"),
])
def test_bad_library_arguments(extra: dict, fragment: str) -> None:
    with pytest.raises(InputError, match=fragment):
        advise(GRID, 1e-2, extra.pop("scheme", "crank-nicolson"), **extra)


# ---------------------------------------------------------------------------------------------
# command line
# ---------------------------------------------------------------------------------------------
def test_cli_time_step_json_and_text(capsys) -> None:
    argv = ["advise", *CABLE, "--quantity", "time-course", "--target", "0.2%", "--scheme", "backward-euler",
            "--times", "0:10:0.5 ms"]
    assert main([*argv, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    step = data["time_step"]
    assert step["scheme"] == "backward-euler"
    assert step["expected_order"] == 1
    assert step["step"]["unit"] == "s"
    assert step["output_spacing"] == {"value": pytest.approx(5e-4), "unit": "s"}
    assert step["step"]["value"] * step["steps_per_output_spacing"] == pytest.approx(5e-4)
    assert step["relative_error"] <= 2e-3
    assert step["time_relative_error"] <= 1e-3
    assert data["space_target_relative_error"] == pytest.approx(1e-3)
    assert data["relative_error"] <= 1e-3
    assert "fixed_step" not in step  # only with --compare-step
    assert step["window"] == {"value": pytest.approx(0.01), "unit": "s"}
    assert step["sample_times"] == 21
    # the recommendation, checked by hand against Rall's (1969) [Rall1969] series
    v = solve(DEMO, data["compartments"][0], GRID, step["step"]["value"], "backward-euler", 500 * UM)
    exact, _ = vf.sealed_step_voltage(DEMO, 100e-12, GRID, np.full(GRID.size, 500 * UM), 1e-18)
    assert relative_max_error(v, exact) <= 2e-3
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert "Time step (backward-euler, order 1 in Δt)" in out
    assert "0.1 % to the compartments, 0.1 % to the time step" in out
    assert f"{data['compartments'][0]} compartments and Δt" in out
    assert "fixed step" not in out
    assert main([*argv, "--compare-step", "50 us", "--json"]) == 0
    fixed = json.loads(capsys.readouterr().out)["time_step"]["fixed_step"]
    assert fixed["step"] == {"value": pytest.approx(5e-5), "unit": "s"}
    assert fixed["relative_error"] > 0
    assert main([*argv, "--compare-step", "50 us"]) == 0
    assert "fixed step 50.00 µs (asked for)" in capsys.readouterr().out


@pytest.mark.parametrize(("argv", "fragment"), [
    (["--quantity", "time-course", "--scheme", "forward-euler"], "--scheme"),
    (["--quantity", "input-resistance", "--scheme", "crank-nicolson"], "--scheme: only --quantity time-course"),
    (["--quantity", "attenuation", "--compare-step", "25us"], "--compare-step: only --quantity time-course"),
    (["--quantity", "time-course", "--compare-step", "-25us"], "--compare-step"),
    (["--quantity", "time-course", "--compare-step", "5 mV"], "--compare-step"),
    (["--quantity", "time-course", "--times", "0 ms"], "at least one time after the onset"),
    (["--quantity", "time-course", "--times", "0,1,1.0000001 ms"], "share no step coarser"),
])
def test_cli_bad_time_step_requests(argv: list[str], fragment: str, capsys) -> None:
    assert main(["advise", *CABLE, *argv]) == 2
    err = capsys.readouterr().err
    assert fragment in err
    assert err.count("\n") == 1
    assert err.startswith("cabletheory: error:")
