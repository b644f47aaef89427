"""``cabletheory derive``: text, LaTeX and JSON output of the symbolic derivations; bad options."""

from __future__ import annotations

import json

import pytest
import sympy as sp

from cabletheory.cli import main
from cabletheory.symbolic import derive


def run(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    return status, out, err


def test_default_prints_text_latex_and_assumptions(capsys):
    status, out, err = run(capsys, ["derive"])
    assert status == 0
    assert err == ""
    assert "current injected at a sealed origin" in out
    assert "passive, linear membrane" in out
    assert "I·R∞" in out
    # the sealed cylinder's steady state cosh(L − X)/sinh(L) (Rall 1959 [Rall1959] [MEM]) in both forms
    assert "cosh(L - X)" in out
    assert r"\frac{\cosh{\left(L - X \right)}}{\sinh{\left(L \right)}}" in out
    assert "LaTeX" in out
    assert "Experimental decisions remain your own judgment" in out


def test_ball_and_stick_modes_text_only(capsys):
    status, out, _ = run(capsys, ["derive", "--origin", "soma", "--part", "modes", "--text"])
    assert status == 0
    assert "same membrane time constant" in out
    # ρ∞ = ρ coth L relation and Rall's (1969) [Rall1969] equation tan(αL) = −α/ρ∞ in pole-free form
    assert "ρ_∞ =" in out
    assert "α⋅cos(L⋅α) + ρ_∞⋅sin(L⋅α) = 0" in out
    assert "\\frac" not in out


def test_latex_only_is_valid_sympy_latex(capsys):
    status, out, _ = run(capsys, ["derive", "--origin", "clamp", "--end", "killed", "--part", "steady", "--latex"])
    assert status == 0
    assert "X = x/λ" not in out  # no readable text section
    lines = [line for line in out.splitlines() if line and not line.startswith("%")]
    assert lines[-1] == "Results assume a passive, linear, uniform membrane; they do not describe " \
        "voltage-gated (active) dendrites. Experimental decisions remain your own judgment."
    assert r"\frac{\sinh{\left(L - X \right)}}{\sinh{\left(L \right)}}" in out


def test_json_output(capsys):
    status, out, _ = run(capsys, ["derive", "--end", "leaky", "--part", "laplace", "--json"])
    assert status == 0
    data = json.loads(out)
    assert data["origin"] == "current"
    assert data["end"] == "leaky"
    assert "caveat" in data
    assert data["normalisation"]["X"].startswith("x/λ")
    last = data["parts"][-1]
    assert last["label"].startswith("Laplace domain")
    # the exact sympy form (srepr) is included for people who want to rebuild the expression
    assert last["sympy"] == sp.srepr(sp.Eq(sp.Function("V̂")(sp.Symbol("X", nonnegative=True), sp.Symbol("s")),
                                           derive("current", "leaky").laplace))
    assert "Symbol('B', positive=True)" in last["sympy"]


def test_ascii_output_has_no_unicode(capsys):
    status, out, _ = run(capsys, ["derive", "--origin", "soma", "--soma-ratio", "rho-inf", "--ascii", "--text"])
    assert status == 0
    assert out.isascii()
    assert "rho_inf" in out


@pytest.mark.parametrize("argv", [
    ["derive", "--origin", "axon"],
    ["derive", "--end", "open"],
    ["derive", "--part", "cosh(L)"],
    ["derive", "--text", "--latex"],
    ["derive", "--soma-ratio", "2"],
])
def test_bad_options_exit_2_with_one_line(capsys, argv):
    status, out, err = run(capsys, argv)
    assert status == 2
    assert out == ""
    assert err.startswith("cabletheory: error:")
    assert err.count("\n") == 1
