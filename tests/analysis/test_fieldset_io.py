"""fields.h5 and the per-mode VTK files (ringprint.analysis.fieldset_io) on a uniform and
on a graded lattice, the FieldSet's lattice facts (ringprint.analysis.fieldset), and the
field stage's clean-up of old field files. The lattices and fields are the synthetic
TE10l cavity of test_field_plots (Pozar 2012, eqs. 6.42)."""

from __future__ import annotations

import h5py
import numpy as np
import pytest

from ringprint.analysis.field_stage import remove_stale
from ringprint.analysis.fieldset import LAYOUT, stored_energy
from ringprint.analysis.fieldset_io import read_fieldset, write_fieldset, write_mode_files
from ringprint.errors import RingprintError
from test_field_plots import H, cavity_fieldset


@pytest.fixture(scope="module", params=[False, True], ids=["uniform", "graded"])
def fs(request):
    return cavity_fieldset(2, graded=request.param)


def test_lattice_facts(fs):
    """Steps, their extremes and the node volumes follow from the axes alone; on a
    uniform lattice every node volume is H^3 (the rule before graded grids)."""
    steps = np.concatenate(fs.steps)
    assert fs.min_step == pytest.approx(steps.min()) and fs.max_step == pytest.approx(steps.max())
    vol = fs.node_volumes()
    assert vol.shape == fs.shape
    # the node volumes tile the lattice's box grown by half an end step on every side
    wx, wy, wz = fs.dual_lengths()
    extent = [a[-1] - a[0] + 0.5 * (d[0] + d[-1]) for a, d in zip((fs.x, fs.y, fs.z), fs.steps)]
    assert vol.sum() == pytest.approx(np.prod(extent), rel=1e-12)
    assert fs.integrate(np.ones(fs.shape)) == pytest.approx(vol.sum(), rel=1e-12)
    if fs.uniform:
        np.testing.assert_allclose(vol, H ** 3, rtol=1e-9)
        assert fs.cell_volume == pytest.approx(H ** 3, rel=1e-9)
    else:
        assert fs.max_step / fs.min_step > 1.8


def test_stored_energy_takes_node_volumes_or_one_number(fs):
    """1 J with node volumes (the normalization of the fixture); on a uniform lattice the
    scalar H^3 gives the same to rounding (rel 1e-9: the coordinates' own rounding)."""
    m = fs.mode(1)
    assert stored_energy(fs.eps_r, m.e, m.h, fs.node_volumes()) == pytest.approx(1.0, rel=1e-12)
    if fs.uniform:
        assert stored_energy(fs.eps_r, m.e, m.h, H ** 3) == pytest.approx(1.0, rel=1e-9)


def test_round_trip(fs, tmp_path):
    path = write_fieldset(tmp_path / "fields.h5", fs)
    back = read_fieldset(path)
    for a, b in zip((fs.x, fs.y, fs.z), (back.x, back.y, back.z)):
        np.testing.assert_array_equal(a, b)
    assert back.uniform == fs.uniform and list(back.parts) == list(fs.parts)
    for m, n in zip(fs.modes, back.modes):
        assert (m.index, m.frequency_hz, m.q) == (n.index, n.frequency_hz, n.q)
        np.testing.assert_allclose(n.e, m.e, rtol=1e-6, atol=1e-6 * np.abs(m.e).max())  # complex64
    assert stored_energy(back.eps_r, back.modes[0].e, back.modes[0].h, back.node_volumes()) \
        == pytest.approx(1.0, rel=1e-6)
    with h5py.File(path, "r") as f:
        assert f.attrs["layout"] == LAYOUT == 2
        assert bool(f.attrs["uniform"]) == fs.uniform
        assert f.attrs["step_min_m"] == pytest.approx(fs.min_step)
        assert f.attrs["step_max_m"] == pytest.approx(fs.max_step)
        assert "spacing_m" not in f.attrs


def test_layout_1_is_read_and_others_refused(tmp_path):
    fs = cavity_fieldset(1)
    path = write_fieldset(tmp_path / "fields.h5", fs)
    with h5py.File(path, "r+") as f:          # what the layout-1 writer left
        f.attrs["layout"] = 1
        f.attrs["spacing_m"] = H
        for key in ("uniform", "step_min_m", "step_max_m"):
            del f.attrs[key]
    back = read_fieldset(path)
    assert back.uniform and back.spacing == pytest.approx(H)
    with h5py.File(path, "r+") as f:
        f.attrs["layout"] = 3
    with pytest.raises(RingprintError) as err:
        read_fieldset(path)
    assert "\n" not in str(err.value) and "layout 3" in str(err.value)


def test_vtk_files_follow_the_lattice(fs, tmp_path):
    """A uniform lattice gives mode_NN.vti (image data), a graded one mode_NN.vtr
    (rectilinear grid with the lattice's own coordinates); both carry the same arrays."""
    import pyvista as pv

    paths = write_mode_files(tmp_path, fs)
    suffix = ".vti" if fs.uniform else ".vtr"
    assert [p.name for p in paths] == [f"mode_0{m.index}{suffix}" for m in fs.modes]
    data = pv.read(paths[0])
    assert isinstance(data, pv.ImageData if fs.uniform else pv.RectilinearGrid)
    if not fs.uniform:
        np.testing.assert_allclose(data.x, fs.x)
        np.testing.assert_allclose(data.z, fs.z)
    want = np.sqrt(np.sum(np.abs(fs.mode(1).e) ** 2, axis=0))
    np.testing.assert_allclose(data.point_data["E_magnitude"], want.ravel(order="F"), rtol=1e-6)
    np.testing.assert_allclose(data.points[np.argmax(data.point_data["E_magnitude"])][[0, 2]],
                               [15e-3, 10e-3], atol=1e-9)   # TE101 peak (Pozar eq. 6.42a)


def test_stale_field_files_of_both_kinds_are_removed(tmp_path):
    for name in ("fields.h5", "mode_01.vti", "mode_02.vtr", "model.vti", "notes.txt"):
        (tmp_path / name).write_text("x")
    remove_stale(tmp_path)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["model.vti", "notes.txt"]
