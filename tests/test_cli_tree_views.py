"""``cabletheory tree FILE --map | --frequencies | --modes | --reduction-cost`` checked through the
command line's own JSON and text against outside results: centroid delays of an isopotential cell
and of a long cable (Agmon-Snir & Segev 1993), cosh L attenuation of a sealed cylinder (Rall 1959),
the exact tree input resistance of ``tree --json``, and peeling a Rall-conforming tree (Rall 1969)."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cabletheory.cli import main

DATA = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
DEMO = str(DATA / "lumenia_demo.outline")
MEMBRANE = ["--Rm", "20 kΩ·cm²", "--Ri", "200 Ω·cm", "--Cm", "1 µF/cm²"]
TAU = 0.020  # s, Rm·Cm of MEMBRANE
# λ of a 1 µm cylinder with MEMBRANE: sqrt(Rm d / 4 Ri) = sqrt(2 Ω·m² · 1e-6 m / 8 Ω·m) = 500 µm [CP]
LAMBDA_1UM = 500e-6


def run(capsys, argv):
    status = main(argv)
    out, err = capsys.readouterr()
    return status, out, err


def as_json(capsys, argv):
    status, out, err = run(capsys, [*argv, "--json"])
    assert status == 0, err
    return json.loads(out)


def straight_swc(folder: Path, pieces: int, step_um: float, *, soma_radius_um: float | None = None) -> str:
    """A straight 1 µm dendrite along x, ``pieces`` points ``step_um`` apart (invented test shape)."""
    lines = ["# a straight test dendrite (invented)"]
    if soma_radius_um is None:
        lines.append("1 3 0 0 0 0.5 -1")
    else:
        lines.append(f"1 1 0 0 0 {soma_radius_um} -1")
    start = 0.0 if soma_radius_um is None else soma_radius_um
    for k in range(1, pieces + 1):
        lines.append(f"{k + 1} 3 {start + k * step_um} 0 0 0.5 {k}")
    path = folder / "straight.swc"
    path.write_text("\n".join(lines) + "\n")
    return str(path)


# --------------------------------------------------------------------------------------
# --map: centroid delays and attenuations
# --------------------------------------------------------------------------------------
def test_centroid_delay_of_an_isopotential_cell_is_tau_m(capsys, tmp_path):
    """Agmon-Snir & Segev 1993 [AgmonSnirSegev1993]: the local centroid delay of an isopotential
    cell is τm. A 20 µm soma with a 1 µm stub (L = 0.002) is isopotential to ~L²."""
    swc = straight_swc(tmp_path, 1, 1.0, soma_radius_um=10.0)
    data = as_json(capsys, ["tree", swc, *MEMBRANE, "--map"])
    assert data["local_delay"]["unit"] == "s"
    assert data["local_delay"]["value"][0] == pytest.approx(TAU, rel=1e-5)
    # from the stub's end the centroid also takes the stub's axial RC, R_axial·G_soma·τm ≈ 1.6e-3 τm [CP]
    assert 0 < data["delay_to_soma"]["value"][1] < 2e-3 * TAU


def test_centroid_delays_of_a_long_cable_are_half_tau_m_per_length_constant(capsys, tmp_path):
    """Agmon-Snir & Segev 1993 [AgmonSnirSegev1993]: at the input end of a semi-infinite cable the
    local delay is τm/2, and the delay from the input to a point X length constants away is X·τm/2.
    A sealed cable of L = 20 differs from the semi-infinite one by ~e^(-2L)."""
    swc = straight_swc(tmp_path, 40, LAMBDA_1UM * 1e6 / 2)
    data = as_json(capsys, ["tree", swc, *MEMBRANE, "--map"])
    delay_from = np.array(data["delay_from_soma"]["value"])
    distance = np.array(data["path_distance"]["value"])
    assert data["local_delay"]["value"][0] == pytest.approx(TAU / 2, rel=1e-9)
    for k in (2, 4, 10):  # X = 1, 2, 5
        assert distance[k] / LAMBDA_1UM == pytest.approx(k / 2, rel=1e-12)
        assert delay_from[k] == pytest.approx(k / 2 * TAU / 2, rel=1e-8)


def test_steady_attenuation_of_a_sealed_cylinder_is_cosh_l(capsys, tmp_path):
    """Rall 1959 [Rall1959] (also Jack, Noble & Tsien 1975 [JackNobleTsien1975]): in a sealed
    cylinder V(0)/V(L) = cosh L; by symmetry of that cable the same holds from the far end."""
    swc = straight_swc(tmp_path, 4, 200.0)  # 800 µm, L = 1.6
    data = as_json(capsys, ["tree", swc, *MEMBRANE, "--map"])
    assert data["attenuation_from_soma"]["value"][-1] == pytest.approx(math.cosh(1.6), rel=1e-12)
    assert data["attenuation_to_soma"]["value"][-1] == pytest.approx(math.cosh(1.6), rel=1e-12)
    # input resistance at the end: R∞ coth L, R∞ = 2 Rm λ ... = (2/π) sqrt(Rm Ri) d^-3/2 [CP]
    r_inf = 2 / math.pi * math.sqrt(2.0 * 2.0) * (1e-6) ** -1.5
    assert data["input_impedance"]["value"][0] == pytest.approx(r_inf / math.tanh(1.6), rel=1e-12)


@pytest.mark.parametrize("path", sorted(DATA.iterdir()), ids=lambda p: p.name)
def test_steady_map_agrees_with_the_exact_tree_input_resistance(capsys, path):
    """The 0 Hz map's input resistance at the soma is the exact tree value of ``tree --json``
    (Rall 1959 [Rall1959] recursion, computed independently in cabletheory.tree), and the two
    attenuations agree with reciprocity, Z_k0 = Z_0k: Z_kk/A_to(k) = Z_00/A_from(k) [CP]."""
    report = as_json(capsys, ["tree", str(path), *MEMBRANE])
    data = as_json(capsys, ["tree", str(path), *MEMBRANE, "--map"])
    z = np.array(data["input_impedance"]["value"])
    a_to = np.array(data["attenuation_to_soma"]["value"])
    a_from = np.array(data["attenuation_from_soma"]["value"])
    assert z[0] == pytest.approx(report["input_resistance"]["value"], rel=1e-10)
    assert np.allclose(z / a_to, z[0] / a_from, rtol=1e-9)
    assert np.all(a_to >= 1 - 1e-12)
    assert np.all(a_from >= 1 - 1e-12)
    assert len(data["points"]) == len(z) == report["pieces"] + 1


def test_map_text_names_units_and_the_caution(capsys):
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--map", "--frequency", "100 Hz"])
    assert status == 0, err
    assert "100.0 Hz" in out
    assert "ms" in out
    assert "µm" in out
    assert "MΩ" in out
    assert "passive" in out
    assert "voltage-gated" in out
    assert "left.a" in out


def test_map_csv_has_a_row_per_point_in_si(capsys):
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--map", "--csv"])
    assert status == 0, err
    rows = [line for line in out.splitlines() if not line.startswith("#")]
    assert rows[0].startswith("point,path_distance_m,")
    assert len(rows) == 1 + 8
    assert any(line.startswith("# assumptions:") for line in out.splitlines())


def test_map_figure_is_written_atomically(capsys, tmp_path):
    target = tmp_path / "map.png"
    status, out, err = run(capsys, ["tree", str(DATA / "lumenia_pv7_interneuron.swc"), *MEMBRANE, "--map",
                                    "--plot", str(target), "--colour-by", "delay-to-soma"])
    assert status == 0, err
    assert target.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert str(target) in out
    svg = tmp_path / "map.svg"
    assert main(["tree", DEMO, *MEMBRANE, "--map", "--plot", str(svg)]) == 0
    assert svg.read_text().lstrip().startswith("<?xml")


def test_an_unwritable_figure_changes_nothing(capsys, tmp_path):
    existing = tmp_path / "map.png"
    existing.write_bytes(b"old")
    folder = tmp_path / "no-such-folder" / "map.png"
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--map", "--plot", str(folder)])
    assert status == 2
    assert out == ""
    assert err.count("\n") == 1
    assert "--plot" in err
    assert existing.read_bytes() == b"old"


# --------------------------------------------------------------------------------------
# --frequencies
# --------------------------------------------------------------------------------------
def test_frequency_response_of_a_sealed_cylinder(capsys, tmp_path):
    """Input impedance at the end of a sealed cylinder, Z = R∞ coth(qL)/q with q = sqrt(1 + iωτ)
    (Koch 1999 [Koch1999]; computed with numpy's complex functions), and reciprocity."""
    swc = straight_swc(tmp_path, 4, 200.0)
    data = as_json(capsys, ["tree", swc, *MEMBRANE, "--frequencies", "0, 10, 100 Hz", "--positions", "root, 5"])
    r_inf = 2 / math.pi * 2.0 * (1e-6) ** -1.5
    for i, f in enumerate((0.0, 10.0, 100.0)):
        q = np.sqrt(1 + 2j * math.pi * f * TAU)
        z_in = r_inf / (q * np.tanh(q * 1.6))
        z_far = r_inf / (q * np.sinh(q * 1.6))  # transfer to the sealed far end [CP]
        assert data["magnitude"]["value"][i][0] == pytest.approx(abs(z_in), rel=1e-10)
        assert data["phase"]["value"][i][0] == pytest.approx(np.angle(z_in), abs=1e-10)
        assert data["magnitude"]["value"][i][1] == pytest.approx(abs(z_far), rel=1e-10)
    assert data["phase"]["unit"] == "rad"
    back = as_json(capsys, ["tree", swc, *MEMBRANE, "--frequencies", "10 Hz", "--stimulus-at", "5",
                            "--positions", "root"])
    assert back["magnitude"]["value"][0][0] == pytest.approx(data["magnitude"]["value"][1][1], rel=1e-12)


def test_frequency_text_and_csv(capsys):
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--frequencies", "0:100:50 Hz", "--stimulus-at",
                                    "left.a", "--positions", "soma"])
    assert status == 0, err
    assert "current at left.a" in out
    assert "°" in out
    assert "MΩ" in out
    assert "Hz" in out
    assert "passive" in out
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--frequencies", "0, 10", "--csv"])
    assert status == 0, err
    rows = [line for line in out.splitlines() if not line.startswith("#")]
    assert rows[0] == "frequency_Hz,point,magnitude_ohm,phase_rad,attenuation"
    assert len(rows) == 3


# --------------------------------------------------------------------------------------
# --modes and --reduction-cost
# --------------------------------------------------------------------------------------
def test_peeling_a_conforming_tree_without_soma_gives_its_equivalent_cylinder(capsys, tmp_path):
    """Rall 1969 [Rall1969]: a sealed cylinder has τ0/τ1 = 1 + (π/L)², so peeling a tree that meets
    Rall's conditions (no soma) gives back its equivalent cylinder's L."""
    outline = tmp_path / "no_soma.outline"
    outline.write_text("\n".join(line for line in Path(DEMO).read_text().splitlines()
                                 if not line.startswith("soma")) + "\n")
    report = as_json(capsys, ["tree", str(outline), *MEMBRANE])
    assert report["reducible"] is True
    data = as_json(capsys, ["tree", str(outline), *MEMBRANE, "--modes", "3"])
    length = report["equivalent_cylinder"]["electrotonic_length"]["value"]
    assert data["peeling"]["electrotonic_length"]["value"] == pytest.approx(length, rel=1e-8)
    tau = data["time_constants"]["value"]
    assert tau[0] == pytest.approx(TAU, rel=1e-12)
    assert tau[0] / tau[1] == pytest.approx(1 + (math.pi / length) ** 2, rel=1e-9)
    assert data["reduction"]["conductance_ratio"] is None


def test_peeling_a_conforming_tree_with_soma_gives_its_ball_and_stick(capsys):
    """Rall 1969 [Rall1969]: τ0/τ1 and C1/C0 of a ball and stick determine L and ρ; for the demo tree
    (reducible, docs/sources.md: L = 0.9954565254, ρ = 7.596794008) peeling returns them."""
    data = as_json(capsys, ["tree", DEMO, *MEMBRANE, "--modes", "2"])
    solutions = data["peeling"]["ball_and_stick"]
    assert any(s["electrotonic_length"]["value"] == pytest.approx(0.9954565254, rel=1e-6)
               and s["conductance_ratio"]["value"] == pytest.approx(7.596794008, rel=1e-6) for s in solutions)
    assert data["reduction"]["electrotonic_length"]["value"] == pytest.approx(0.9954565254, rel=1e-9)
    assert data["tree"]["time_constants"]["value"] == pytest.approx(data["reduction"]["time_constants"]["value"],
                                                                    rel=1e-9)


def test_modes_text_lists_time_constants_with_units(capsys):
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--modes", "3"])
    assert status == 0, err
    assert "20.00 ms" in out
    assert "τ0/τ1 of the tree" in out
    assert "ρ" in out
    assert "leave the soma at rest" in out  # the symmetric demo tree hides modes
    assert "passive" in out


def test_reduction_cost_of_a_conforming_tree_is_nil_and_of_pv7_is_not(capsys, tmp_path):
    """A tree meeting Rall's conditions equals its reduction (Rall 1959/1969 [Rall1959] [Rall1969]):
    the largest difference is within the error estimates; the unreduced PV-7 cell differs."""
    data = as_json(capsys, ["tree", DEMO, *MEMBRANE, "--reduction-cost", "--current", "100 pA"])
    bound = data["tree_error_bound"]["value"] + data["reduced_error_bound"]["value"]
    assert data["largest_difference"]["value"] <= bound + 1e-12
    assert data["times"]["value"][-1] == pytest.approx(2 * TAU)
    figure = tmp_path / "cost.svg"
    pv7 = as_json(capsys, ["tree", str(DATA / "lumenia_pv7_interneuron.swc"), *MEMBRANE, "--reduction-cost",
                           "--current", "100 pA", "--shape", "alpha", "--time-to-peak", "1 ms", "--times",
                           "0:40:2 ms", "--plot", str(figure)])
    assert pv7["largest_difference"]["value"] > 1e-5
    k = pv7["times"]["value"].index(pv7["when"]["value"])
    diff = pv7["reduced_voltage"]["value"][k] - pv7["tree_voltage"]["value"][k]
    assert abs(diff) == pytest.approx(pv7["largest_difference"]["value"], rel=1e-12)
    assert figure.read_text().lstrip().startswith("<?xml")


def test_reduction_cost_text_and_csv(capsys):
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--reduction-cost", "--current", "50 pA",
                                    "--shape", "pulse", "--duration", "2 ms", "--times", "0:10:1 ms"])
    assert status == 0, err
    assert "largest difference" in out
    assert "50.00 pA" in out
    assert "2.000 ms" in out
    assert "mV" in out
    assert "passive" in out
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--reduction-cost", "--current", "50", "--csv"])
    assert status == 0, err
    rows = [line for line in out.splitlines() if not line.startswith("#")]
    assert rows[0] == "time_s,tree_voltage_V,reduced_voltage_V,difference_V"
    assert len(rows) == 22


def test_killed_tips_are_named_as_held_at_rest(capsys):
    status, out, err = run(capsys, ["tree", DEMO, *MEMBRANE, "--tips", "killed", "--map"])
    assert status == 0, err
    assert out.count("held at rest (killed tip)") == 4
    assert "nan" not in out.split("Points")[1].split("How to read")[0]
    assert "largest attenuation from the soma  3.619 (point left)" in out


@settings(derandomize=True, max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=st.one_of(st.text(st.sampled_from(list("abcdefghijklmnopqrstuvwxyz.,:-0123456789 ")), max_size=30),
                      st.text(max_size=20)),
       option=st.sampled_from(["--positions", "--stimulus-at", "--frequencies"]))
def test_any_point_or_frequency_text_is_answered_or_refused_in_one_line(capsys, text, option):
    argv = ["tree", DEMO, *MEMBRANE, "--frequencies", "10 Hz"]
    if option == "--frequencies":
        argv = argv[:-2]
    status = main([*argv, f"{option}={text}"])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    errors = [line for line in err.splitlines() if not line.startswith("cabletheory: warning: ")]
    if status == 2:
        assert len(errors) == 1, err
        assert errors[0].startswith("cabletheory: error: ")
        assert out == ""
    else:
        assert status == 0, err
        assert "Impedance" in out
