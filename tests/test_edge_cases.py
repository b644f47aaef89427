"""Edge cases found by review: very short cables, absurd magnitudes, and consistent refusals."""

from __future__ import annotations

import mpmath
import numpy as np
import pytest

from cabletheory import cable, transient
from cabletheory.cli import main


@pytest.mark.parametrize("length", [1e-9, 1e-8, 1e-7])
def test_very_short_cable_stays_within_its_error_bound(length):
    """A cable far shorter than λ charges like an isopotential cell; the value must still lie within
    the reported bound of the exact solution, here the mpmath Talbot inversion of the sealed cable's
    Laplace-domain voltage at X = 0, coth(L q)/(s q), q = √(1+s) (Rall 1969 [Rall1969];
    Talbot 1979 [Talbot1979])."""
    cyl = cable.Cylinder(2.0, 2.0, 0.01, 2e-6, length)
    tau, lam, r_inf = cyl.time_constant, cyl.length_constant, cyl.semi_infinite_input_resistance
    L = length / lam
    times = np.array([1e-12, 1e-9, 1e-6]) * tau
    response = transient.charge(cyl, transient.CurrentStep(1e-10), times, [0.0])
    with mpmath.workdps(40):
        for t, v in zip(times, response.voltage[:, 0], strict=True):
            exact = float(mpmath.invertlaplace(lambda s: mpmath.coth(L * mpmath.sqrt(1 + s)) / (s * mpmath.sqrt(1 + s)),
                                               t / tau, method="talbot")) * 1e-10 * r_inf
            assert abs(v - exact) <= response.error_bound + 1e-15 * abs(exact)


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["charge", "--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "500", "--current", "100",
          "--soma-diameter", "1e308"], "--soma-diameter: '1e308' is outside the range"),
        (["cable", "--Rm", "20000", "--Ri", "200", "--diameter", "1e308", "--length", "500"],
         "--diameter: '1e308' is outside the range"),
        (["cable", "--Rm", "1e-300", "--Ri", "200", "--diameter", "2", "--length", "500"],
         "--Rm: '1e-300' is outside the range"),
        (["charge", "--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "500", "--current", "100",
          "--times", "1e308"], "--times: '1e308' is outside the range"),
        (["cable", "--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "inf", "--end", "killed"],
         "--end: a semi-infinite cable (--length inf) has no far end"),
        (["cable", "--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "5", "--digits", "99"],
         "cable: argument --digits: 99 is not between 2 and 15"),
    ],
)
def test_absurd_or_contradictory_input_is_one_line_status_2(capsys, argv, message):
    status = main(argv)
    out, err = capsys.readouterr()
    assert status == 2
    assert out == ""
    assert err.count("\n") == 1
    assert message in err
    assert "cabletheory cable:" not in err  # no doubled program name


def test_numeric_overflow_in_a_command_is_reported_not_printed(capsys, monkeypatch):
    """A floating-point overflow inside a command becomes one line and status 2, never inf or nan."""
    from cabletheory.cli import cable as cable_command

    def overflowing(*_args, **_kwargs):
        return np.float64(1e308) * np.float64(10.0)

    monkeypatch.setattr(cable_command, "summarise", overflowing)
    status = main(["cable", "--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "500"])
    _, err = capsys.readouterr()
    assert status == 2
    assert err.startswith("cabletheory: error: the inputs give numbers too large or too small")
    assert err.count("\n") == 1


def test_one_compartment_is_singular(capsys):
    main(["cable", "--Rm", "20000", "--Ri", "200", "--diameter", "2", "--length", "5"])
    out, _ = capsys.readouterr()
    assert "Compartment advice: 1 equal compartment keeps each within 0.1 of the length constant" in out


def test_rall_series_of_the_check_agrees_with_the_transients_for_a_very_short_cable():
    """verify.sealed_step_voltage (Rall 1969 [Rall1969] series) and transient.charge are independent codes; for a
    1 nm cable they must agree within their bounds (both use expm1 for 1 − e^(−2L))."""
    from cabletheory.verify.exact import sealed_step_voltage

    cyl = cable.Cylinder(2.0, 2.0, 0.01, 2e-6, 1e-9)
    times = np.array([1e-12, 1e-9, 1e-6]) * cyl.time_constant
    series, series_bound = sealed_step_voltage(cyl, 1e-10, times, np.zeros(3), 1e-20)
    exact = transient.charge(cyl, transient.CurrentStep(1e-10), times, [0.0])
    assert np.all(np.abs(series - exact.voltage[:, 0]) <= series_bound + exact.error_bound)
