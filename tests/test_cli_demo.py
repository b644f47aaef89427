"""``cabletheory demo`` runs every step of the tour on the bundled data without a bad-input error."""

from __future__ import annotations

from cabletheory.cli import main


def test_demo_runs_every_step(capsys):
    status = main(["demo"])
    out, err = capsys.readouterr()
    assert status == 0, err
    assert err == ""
    assert out.count("=== step ") >= 7
    # the steps tell a story with both outcomes: a reducible tree and one that is not,
    # a coarse simulator run that fails and a refined one that passes
    assert "Verdict: REDUCIBLE" in out
    assert "Verdict: NOT reducible" in out
    assert "FAIL (pass within 20.0 µV)" in out
    assert "PASS (pass within 20.0 µV)" in out
    assert "Equalising time constants" in out
    # peeling step 2's charging curve recovers the 20 µm soma and the 2 µm x 500 µm dendrite of step 1
    assert "soma diameter (sphere of that area)             20.00 µm" in out
    assert "equivalent cylinder diameter                    2.000 µm" in out
    assert "equivalent cylinder length ℓ = Lλ               500.0 µm" in out
    assert "passive, linear, uniform membrane" in out
    # the survey step: every cell of the bundled archive, the damaged files as rows
    assert "cells                                            33 (30 analysed, 3 could not be read or analysed)" in out
    assert "lumenia_orphan.swc:307: parent 9999" in out
