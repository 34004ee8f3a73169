"""``ringprint run`` end to end on a small case: outputs, contract keys, resume, bad input.

The physics reference here is the half-wave resonance of a thin straight conductor:
the first resonance of a strip of length L lies a little below c / (2 L) (common
practice; the shortening grows with thickness). tests/validation holds the checks
against closed forms.
"""

import json

import meshio
import numpy as np
import pytest

from ringprint.analysis import cli
from ringprint.analysis.pipeline import run_case
from ringprint.analysis.ringdown import RunHalted
from ringprint.errors import RingprintError

C0 = 299_792_458.0
LENGTH_MM = 60.0


def _write_strip(path, length=LENGTH_MM, width=4.0):
    """A flat rectangular sheet (two triangles, zero thickness) along x, in mm."""
    h, w = length / 2, width / 2
    pts = np.array([[-h, -w, 0], [h, -w, 0], [h, w, 0], [-h, w, 0]], float)
    meshio.write(path, meshio.Mesh(pts, [("triangle", np.array([[0, 1, 2], [0, 2, 3]]))]), binary=True)


def _case(tmp_path, extra=""):
    _write_strip(tmp_path / "strip.stl")
    text = f"""
title = "Test strip"
units = "mm"
[spectrum]
f_min = "1.5 GHz"
f_max = "3.5 GHz"
[[part]]
name = "strip"
file = "strip.stl"
material = "pec"
[grid]
cells_per_wavelength = 24
[analysis]
q_max = 40
[[band]]
name = "test band"
low = "2.2 GHz"
high = "2.5 GHz"
{extra}
"""
    case = tmp_path / "strip.toml"
    case.write_text(text)
    return case


@pytest.fixture(scope="module")
def strip_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("strip")
    case = _case(tmp)
    out = tmp / "out"
    summary = run_case(case, out, progress=False, echo=None)
    return case, out, summary


def test_outputs_exist_and_follow_the_contract(strip_run):
    _case_path, out, summary = strip_run
    for name in ("modes.json", "modes.csv", "report.html", "spectrum.png", "case.resolved.toml", "run.log"):
        assert (out / name).is_file(), name
    assert not list(out.glob("*.tmp*")) and not (out / "checkpoint.h5").exists()
    data = json.loads((out / "modes.json").read_text())
    assert {"case", "grid", "modes"} <= set(data)
    assert data["modes"], "the strip has a half-wave resonance in the window"
    for k, mode in enumerate(data["modes"], start=1):
        assert mode["index"] == k
        assert {"frequency_hz", "q", "decay_rate_per_s", "amplitude", "error", "q_chu",
                "bands", "participation"} <= set(mode)
        # Q = omega / (2 decay rate), the definition the report states
        assert mode["q"] == pytest.approx(np.pi * mode["frequency_hz"] / mode["decay_rate_per_s"], rel=1e-9)
    assert summary["modes"] == data["modes"]


def test_half_wave_resonance_and_chu_bound(strip_run):
    """First resonance a little below c/(2L) (common practice: a few percent short for a
    strip of width L/15), and its Q above the Chu bound for the enclosing sphere (Chu 1948)."""
    _case_path, _out, summary = strip_run
    half_wave = C0 / (2 * LENGTH_MM * 1e-3)
    first = min(summary["modes"], key=lambda m: abs(m["frequency_hz"] - half_wave))
    assert 0.85 * half_wave < first["frequency_hz"] < 1.0 * half_wave
    for m in summary["modes"]:
        assert m["q"] >= m["q_chu"], m


def test_band_judgement_in_summary(strip_run):
    _case_path, _out, summary = strip_run
    first = summary["modes"][0]
    entry = first["bands"][0]
    assert entry["band"] == "test band" and entry["status"] in ("inside", "near", "clear")
    inside = 2.2e9 <= first["frequency_hz"] <= 2.5e9
    assert (entry["status"] == "inside") == inside


def test_resume_gives_the_same_modes(strip_run, tmp_path):
    """A run killed part way and resumed reproduces the uninterrupted run (to 1e-6)."""
    case, _out, full = strip_run
    out = tmp_path / "resumed"
    with pytest.raises(RunHalted):
        run_case(case, out, progress=False, echo=None, halt_after_steps=600)
    assert (out / "checkpoint.h5").is_file() and not (out / "modes.json").exists()
    resumed = run_case(case, out, resume=True, progress=False, echo=None)
    assert len(resumed["modes"]) == len(full["modes"])
    for a, b in zip(resumed["modes"], full["modes"]):
        assert a["frequency_hz"] == pytest.approx(b["frequency_hz"], rel=1e-6)
        assert a["q"] == pytest.approx(b["q"], rel=1e-6)


def test_resume_refuses_a_directory_without_checkpoint(tmp_path, capsys):
    case = _case(tmp_path)
    code = cli.main(["run", str(case), "--out", str(tmp_path / "empty"), "--resume", "--quiet"])
    err = capsys.readouterr().err
    assert code == 1 and "no checkpoint" in err and "Traceback" not in err
    assert not (tmp_path / "empty").exists()       # refused before the folder was made (issue 13)


def test_resume_refuses_another_cases_checkpoint(strip_run, tmp_path):
    case, _out, _summary = strip_run
    out = tmp_path / "other"
    with pytest.raises(RunHalted):
        run_case(case, out, progress=False, echo=None, halt_after_steps=300)
    changed = _case(tmp_path, extra="")
    changed.write_text(changed.read_text().replace("q_max = 40", "q_max = 50"))
    with pytest.raises(RingprintError, match="another case"):
        run_case(changed, out, resume=True, progress=False, echo=None)


def test_a_halted_run_says_so_in_its_log(tmp_path):
    """A run stopped on purpose (halt_after_steps) is not logged as failed (issue 13)."""
    with pytest.raises(RunHalted):
        run_case(_case(tmp_path), tmp_path / "o", progress=False, echo=None, halt_after_steps=20)
    log = (tmp_path / "o" / "run.log").read_text()
    assert "run halted after step" in log.strip().splitlines()[-1] and "run failed" not in log


def test_probe_inside_a_conductor_is_refused(tmp_path, capsys):
    case = _case(tmp_path, extra='[probe]\nat = [0.0, 0.0, 0.0]\nnormal = "z"\nsize = 2.0\n')
    code = cli.main(["run", str(case), "--out", str(tmp_path / "o"), "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 1 and len(err) == 1 and "touches a conductor" in err[0]
    assert not (tmp_path / "o" / "modes.json").exists()
    # the log of the failed run ends with the error line (issue 13)
    last = (tmp_path / "o" / "run.log").read_text().strip().splitlines()[-1]
    assert "ERROR" in last and "run failed" in last and "touches a conductor" in last, last


def test_output_directory_that_is_a_file(tmp_path, capsys):
    case = _case(tmp_path)
    target = tmp_path / "taken"
    target.write_text("keep me")
    code = cli.main(["run", str(case), "--out", str(target), "--quiet"])
    assert code == 1 and "ringprint: error:" in capsys.readouterr().err
    assert target.read_text() == "keep me"


def test_mode_fields_are_written_and_the_strip_carries_its_mode(strip_run):
    """With fields on (the default): fields.h5, one mode_NN.vti (uniform lattice) or
    mode_NN.vtr (graded, the default grid) per mode, participation naming the strip,
    touch spots, and the hazard naming the part."""
    from ringprint.analysis.fieldset_io import read_fieldset

    _case_path, out, summary = strip_run
    assert summary["results_layout"] == 2 and summary["fields"]["file"] == "fields.h5"
    fs = read_fieldset(out / "fields.h5")
    assert [m.index for m in fs.modes] == [m["index"] for m in summary["modes"]]
    suffix = "vti" if summary["fields"]["uniform"] else "vtr"
    assert summary["grid"]["step_min_m"] < summary["grid"]["step_max_m"]   # graded by default
    for m in summary["modes"]:
        assert (out / f"mode_{m['index']:02d}.{suffix}").is_file()
        assert set(m["participation"]) == {"strip"}
        assert m["touch"]["worst"] and all(s["shift_percent"] <= 0 for s in m["touch"]["worst"])
    half_wave = min(summary["modes"], key=lambda m: abs(m["frequency_hz"] - C0 / (2 * LENGTH_MM * 1e-3)))
    assert half_wave["rings_in"] == "strip"
    assert all(h["part"] == "strip" for h in summary["hazards"] if h["mode"] == half_wave["index"])


def test_no_fields_skips_them_and_clears_stale_field_files(strip_run, tmp_path, capsys):
    import shutil

    case, out, _summary = strip_run
    copy = tmp_path / "again"
    shutil.copytree(out, copy)
    assert (copy / "fields.h5").is_file()
    code = cli.main(["run", str(case), "--out", str(copy), "--no-fields", "--quiet"])
    assert code == 0, capsys.readouterr().err
    summary = json.loads((copy / "modes.json").read_text())
    assert summary["fields"] is None and not (copy / "fields.h5").exists()
    assert not list(copy.glob("mode_*.vt[ir]"))
    assert all(m["participation"] == {} for m in summary["modes"])


def test_field_memory_too_small_is_refused_before_stepping(tmp_path, capsys):
    case = _case(tmp_path, extra="[output]\nfield_memory = 0.001\n")
    code = cli.main(["run", str(case), "--out", str(tmp_path / "o"), "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 1 and len(err) == 1 and "output.field_memory" in err[0], err
    assert not (tmp_path / "o" / "modes.json").exists() and not (tmp_path / "o" / "checkpoint.h5").exists()


def test_a_touch_map_that_cannot_be_made_keeps_the_rest(tmp_path, monkeypatch):
    """When the touch map is refused (e.g. no outside air reaches the parts) the run
    still writes its modes, fields and report, with a note: nothing computed is lost."""
    from ringprint.analysis import touch

    def refuse(*_args, **_kwargs):
        raise RingprintError("no air reaches the lattice boundary, so nothing can be touched")

    monkeypatch.setattr(touch, "touch_maps", refuse)
    case = _case(tmp_path)
    summary = run_case(case, tmp_path / "o", progress=False, echo=None)
    assert summary["modes"] and all("touch" not in m for m in summary["modes"])
    assert any(n.startswith("touch maps skipped") for n in summary["notes"])
    assert (tmp_path / "o" / "fields.h5").is_file() and (tmp_path / "o" / "report.html").is_file()


# -- grid study --------------------------------------------------------------------
SPHERE_EPS, SPHERE_MM = 36.0, 25.0


def _te1_pole_ka(eps_r):
    """k0 a of the magnetic-dipole natural resonance of a dielectric sphere: the complex
    zero of the denominator of the Mie coefficient b_1 (Bohren, C. F. & Huffman, D. R.,
    Absorption and Scattering of Light by Small Particles, 1983, eq. 4.57, mu1 = mu),
    psi_1(m x) xi_1'(x) - m psi_1'(m x) xi_1(x), with the Riccati-Bessel functions of
    order 1 written out and xi_1 built on the outgoing Hankel function. The search starts
    from the large-m limit of the TE_1 pole, j_0(m x) = 0, x = pi / m."""
    import mpmath as mp

    m = mp.sqrt(eps_r)

    def psi(z):
        return mp.sin(z) / z - mp.cos(z)

    def dpsi(z):
        return mp.cos(z) / z - mp.sin(z) / z ** 2 + mp.sin(z)

    def xi(z):
        return -mp.exp(1j * z) * (1 + 1j / z)

    def dxi(z):
        return -mp.exp(1j * z) * (1j - 1 / z - 1j / z ** 2)

    return complex(mp.findroot(lambda x: psi(m * x) * dxi(x) - m * dpsi(m * x) * xi(x),
                               mp.pi / m - 0.01j))


@pytest.fixture(scope="module")
def sphere_study(tmp_path_factory):
    """The eps_r-36 sphere (radius 25 mm, 128-segment mesh, 0.10 % small in volume) at
    13 cells per wavelength in the sphere at f_max (15.6 cells across), grid check on
    two grids (the coarser at 10: 12 cells across); no fields; uniform grids (the figures
    below were measured on them; the graded grid is checked in
    tests/validation/test_e2e_graded_sphere.py). The record and padding are those of
    tests/validation/test_e2e_dielectric_sphere.py."""
    tmp = tmp_path_factory.mktemp("sphere_study")
    _write_sphere(tmp / "ball.stl", SPHERE_MM)
    case = tmp / "ball.toml"
    case.write_text(f"""
title = "Ball"
units = "mm"
[spectrum]
f_min = "0.8 GHz"
f_max = "1.2 GHz"
[[part]]
name = "ball"
file = "ball.stl"
material = {{ eps_r = {SPHERE_EPS} }}
[grid]
cells_per_wavelength = 13
padding = {SPHERE_MM}
graded = false
[analysis]
q_max = 25
grid_check = true
""")
    out = tmp / "out"
    lines = []
    summary = run_case(case, out, progress=False, echo=lines.append, fields=False)
    return out, summary, "\n".join(lines)


@pytest.mark.slow
def test_grid_study_moves_towards_the_mie_pole_and_covers_the_error(sphere_study):
    """Against the b_1 Mie pole (Bohren & Huffman 1983, computed above): the Richardson
    value lies closer to it than the computed one, in frequency and in Q, and the stated
    uncertainty (GCI, Roache 1994, safety 3, order 2) covers the computed-vs-reference
    difference. With two grids the uncertainty is not below the stated bound
    (grid_study.TWO_GRID_FLOOR): here the Q moved by only 0.06 % between the grids while
    it lies +0.75 % off the pole, and the GCI alone (0.27 %) did not cover it. Measured:
    f uncertainty 1.08 % (the stated bound: Yee dispersion at 13 cells per wavelength
    plus the geometry term), Q covered by its stated bound. The uncertainty must also
    stay informative: below 1.5 % in f and 3 % in Q (which would catch a safety factor
    or order applied twice)."""
    _out, summary, _text = sphere_study
    x = _te1_pole_ka(SPHERE_EPS)
    f_ref = C0 * x.real / (2 * np.pi * SPHERE_MM * 1e-3)
    q_ref = x.real / (2 * abs(x.imag))
    study = summary["uncertainty"]["grid_study"]
    assert summary["uncertainty"]["basis"] == "grid study" and study["safety_factor"] == 3.0
    assert study["stated_order"] == 2.0 and study["ratio"] == pytest.approx(1.3, rel=1e-9)
    mode = min(summary["modes"], key=lambda m: abs(m["frequency_hz"] - f_ref))
    assert mode["uncertainty_basis"] == "grid study" and mode["index"] in study["matched"]
    f, f_ext, u_f = mode["frequency_hz"], mode["frequency_extrapolated_hz"], mode["frequency_uncertainty_hz"]
    q, q_ext, u_q = mode["q"], mode["q_extrapolated"], mode["q_uncertainty"]
    assert abs(f_ext - f_ref) < abs(f - f_ref)
    assert abs(q_ext - q_ref) < abs(q - q_ref)
    assert abs(f - f_ref) <= u_f < 0.015 * f
    assert abs(q - q_ref) <= u_q < 0.03 * q


@pytest.mark.slow
def test_grid_study_outputs(sphere_study):
    """modes.json keeps ``error`` and adds the uncertainty keys and the study block;
    modes.csv gains the columns; the terminal table and report print the uncertainty."""
    import csv

    out, summary, text = sphere_study
    data = json.loads((out / "modes.json").read_text())
    assert data["uncertainty"] == summary["uncertainty"]
    for m in data["modes"]:
        assert m["fit_error"] == m["error"]
        assert {"frequency_uncertainty_hz", "q_uncertainty", "uncertainty_basis",
                "frequency_extrapolated_hz", "q_extrapolated"} <= set(m)
    rows = list(csv.DictReader((out / "modes.csv").open()))
    assert float(rows[0]["frequency_uncertainty_hz"]) == data["modes"][0]["frequency_uncertainty_hz"]
    assert rows[0]["uncertainty_basis"] == data["modes"][0]["uncertainty_basis"]
    assert "\u00b1" in text and "ppm" not in text and "grid study" in text
    assert "grid_check = 2" in (out / "case.resolved.toml").read_text()
    html = (out / "report.html").read_text()
    assert 'id="uncertainty"' in html and "Grid study: cells per wavelength 13, 10" in html


def _write_sphere(path, radius_mm):
    from ringprint.meshing import primitives

    s = primitives.sphere(radius_mm, n=128)
    meshio.write(path, meshio.Mesh(np.asarray(s.vertices, float), [("triangle", np.asarray(s.faces))]),
                 binary=True)


@pytest.mark.slow
def test_grid_study_of_conformal_metal_covers_the_error(tmp_path):
    """A perfectly conducting sphere (radius 30 mm, 20 cells across, conformal metal)
    against its TM_1 natural frequency: the zero of d/dx[x h_1(x)], i.e. of x^2 + i x - 1
    with the outgoing Hankel function (Stratton, Electromagnetic Theory, 1941, sec. 9.22),
    solved here: k a = sqrt(3)/2 - i/2, Q = 0.866. Conformal metal is a second-order
    method (tests/validation/test_conformal_cavity.py), so the study assumes order 2
    with Roache's safety factor 3, and its uncertainty must cover the computed-vs-exact
    difference. (With the staircase this case needed the stated bound as a floor: its
    two-grid GCI of Q, 7.3 %, fell short of its +7.5 % error.) Measured: f +0.08 %
    (uncertainty 0.52 %), Q +0.62 % (uncertainty 1.2 %); the Richardson values (f +0.10 %,
    Q +1.0 %) are not closer, as two grids of a non-asymptotic error allow (the stated
    bound is the floor, grid_study.TWO_GRID_FLOOR), so only the coverage is asserted. Setup as in
    tests/validation/test_e2e_pec_sphere.py (spectrum 0.4-4.1 GHz, q_max 2)."""
    _write_sphere(tmp_path / "ball.stl", 30.0)
    cells = C0 / (4.1e9 * 3e-3)                       # 3 mm cells: 20 across the sphere
    case = tmp_path / "ball.toml"
    case.write_text(f"""
units = "mm"
[spectrum]
f_min = "0.4 GHz"
f_max = "4.1 GHz"
[[part]]
name = "ball"
file = "ball.stl"
material = "pec"
[grid]
cells_per_wavelength = {cells!r}
[analysis]
q_max = 2
grid_check = true
""")
    summary = run_case(case, tmp_path / "out", progress=False, echo=None, fields=False)
    ka = max(np.roots([1.0, 1j, -1.0]), key=lambda z: z.real)
    f_ref = C0 * ka.real / (2 * np.pi * 30e-3)
    q_ref = ka.real / (2 * abs(ka.imag))
    assert summary["uncertainty"]["grid_study"]["stated_order"] == 2.0
    m = min(summary["modes"], key=lambda m: abs(m["frequency_hz"] - f_ref))
    assert m["uncertainty_basis"] == "grid study"
    assert abs(m["frequency_hz"] - f_ref) <= m["frequency_uncertainty_hz"] < 0.02 * f_ref
    assert abs(m["q"] - q_ref) <= m["q_uncertainty"] < 0.06 * q_ref


def test_strip_modes_carry_the_stated_bound(strip_run):
    """Without a grid study every mode gets the stated bound, which is at least the metal
    geometry term (1.2 % at 16 cells along the part, scaled as 1/cells: the strip is 60 mm
    on a 3.6 mm grid, about 17 cells) and the fit error is kept under its own name."""
    _case_path, _out, summary = strip_run
    assert summary["uncertainty"]["basis"] == "stated bound"
    assert summary["uncertainty"]["grid_study"] is None
    cells = 60.0 / (C0 / 3.5e9 / 24 * 1e3)
    for m in summary["modes"]:
        assert m["uncertainty_basis"] == "stated bound" and m["fit_error"] == m["error"]
        assert m["frequency_uncertainty_hz"] >= 0.012 * 16 / np.ceil(cells) * m["frequency_hz"]


def test_grid_check_with_too_few_cells_is_refused(tmp_path, capsys):
    case = _case(tmp_path)
    case.write_text(case.read_text().replace("cells_per_wavelength = 24", "cells_per_wavelength = 12"))
    code = cli.main(["run", str(case), "--out", str(tmp_path / "o"), "--grid-check", "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 1 and len(err) == 1 and "cells_per_wavelength >= 13" in err[0], err
    assert not (tmp_path / "o").exists()


@pytest.mark.parametrize("key, value, expected", [("grid_check", '"yes"', "true, false or 3"),
                                                    ("stop_when_converged", '"yes"', "true or false")])
def test_analysis_key_of_the_wrong_kind_is_refused(tmp_path, capsys, key, value, expected):
    case = _case(tmp_path)
    case.write_text(case.read_text().replace("q_max = 40", f"q_max = 40\n{key} = {value}"))
    code = cli.main(["run", str(case), "--out", str(tmp_path / "o"), "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 1 and len(err) == 1 and key in err[0] and expected in err[0], err


def test_probe_s11_file_report_section_and_self_match(strip_run, tmp_path, capsys):
    """The run writes the probe's S11 as Touchstone and a report section, and gives each
    mode its dip. Read back as if measured, `ringprint match` pairs the strip's mode with
    itself: the loaded f_L within the mode's half-power half-width f/(2Q) of the
    open-loop pole (the loaded pole moves by kappa X/(2 Z0 Q0) of f, see
    tests/validation/test_probe_s11_cavity.py), and Q_0 = Q_L (1 + kappa) within 10 %
    of the run's Q (the run rings with the probe open, so its Q is unloaded)."""
    _case_path, out, summary = strip_run
    from ringprint.analysis.touchstone import read_reflection
    trace = read_reflection(out / "probe.s11.s1p")
    assert trace.z0 == 50.0 and trace.f_hz[0] == 1.5e9 and trace.f_hz[-1] == 3.5e9
    assert np.all(np.abs(trace.s) <= 1 + 1e-9)                 # a passive port
    assert summary["probe_s11"]["file"] == "probe.s11.s1p"
    assert all(m["probe_s11_db"] <= 0 for m in summary["modes"])
    assert 'id="probe-s11-table"' in (out / "report.html").read_text()
    code = cli.main(["match", str(out), str(out / "probe.s11.s1p"), "--min-circle", "1e-6",
                     "--out", str(tmp_path / "self")])
    assert code == 0, capsys.readouterr().err
    result = json.loads((tmp_path / "self" / "match.json").read_text())
    first = summary["modes"][0]
    pair = next(r for r in result["pairs"] if r["mode"] == first["index"])
    assert abs(pair["offset_percent"]) < 100 / (2 * first["q"])
    assert abs(pair["q_ratio"] - 1) < 0.10
