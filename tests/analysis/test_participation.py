"""Which part rings (ringprint.analysis.participation) and the field lattice plan
(ringprint.analysis.lattice) on hand-made lattices whose answers are known by
construction."""

from types import SimpleNamespace

import numpy as np
import pytest

from _graded import graded_nodes
from ringprint.analysis import lattice as lt
from ringprint.analysis.fieldset import FieldSet, ModeField
from ringprint.analysis.participation import RINGS_IN_MIN, Regions, participation
from ringprint.errors import RingprintError

N = 30
H = 1e-3


def _fieldset(conductors=("plate",)):
    shape = (N, N, N)
    plate = np.zeros(shape, bool)
    plate[5:10, 5:25, 14:16] = True
    block = np.zeros(shape, bool)
    block[20:26, 10:20, 10:20] = True
    ax = H * np.arange(N)
    return FieldSet(ax, ax, ax, eps_r=np.where(block, 4.0, 1.0).astype(np.float32),
                    sigma=np.zeros(shape, np.float32), pec=plate.copy(),
                    parts={"plate": plate, "block": block}, conductors=conductors)


def _mode(fs, e_mask, h_mask=None):
    e = np.zeros((3,) + fs.shape, np.complex64)
    h = np.zeros_like(e)
    e[2][e_mask] = 1.0
    if h_mask is not None:
        h[0][h_mask] = 1e-3
    return ModeField(1, 1e9, 50.0, e, h)


def test_field_inside_the_block_belongs_to_the_block():
    fs = _fieldset()
    p = participation(fs, _mode(fs, fs.parts["block"]))
    assert p["share"]["block"] == pytest.approx(1.0)
    assert p["share"]["plate"] == 0.0
    assert p["detail"]["block"]["electric_inside"] == pytest.approx(1.0)
    assert p["rings_in"] == "block"


def test_field_next_to_the_conductor_is_its_shell():
    """A conductor holds no field inside; the air within SHELL_CELLS around it is its own."""
    fs = _fieldset()
    near = np.zeros(fs.shape, bool)
    near[5:10, 5:25, 16:18] = True                     # the two air layers above the plate
    far = np.zeros(fs.shape, bool)
    far[0:2, 0:2, 0:2] = True                          # a corner far from both parts
    p = participation(fs, _mode(fs, near | far, h_mask=near))
    total = np.sum(fs.energy_density(_mode(fs, near | far, h_mask=near)))
    share_near = np.sum(fs.energy_density(_mode(fs, near, h_mask=near))) / total
    assert p["share"]["plate"] == pytest.approx(share_near, rel=1e-6)
    assert p["detail"]["plate"]["electric_inside"] == 0.0
    assert p["detail"]["plate"]["surface_current"] == pytest.approx(1.0)
    assert p["detail"]["block"]["surface_current"] is None
    assert p["rings_in"] == "plate"


def test_conductor_claims_the_air_between_it_and_a_dielectric():
    fs = _fieldset()
    fs.parts["block"][:] = False
    fs.parts["block"][5:10, 5:25, 18:20] = True         # a plastic cover 2 cells above the plate
    gap = np.zeros(fs.shape, bool)
    gap[5:10, 5:25, 16:18] = True
    p = participation(fs, _mode(fs, gap))
    assert p["share"]["plate"] == pytest.approx(1.0) and p["share"]["block"] == 0.0


def test_a_mode_in_open_air_rings_nowhere():
    fs = _fieldset()
    far = np.zeros(fs.shape, bool)
    far[0:3, 25:30, 25:30] = True
    p = participation(fs, _mode(fs, far))
    assert max(p["share"].values()) < RINGS_IN_MIN and p["rings_in"] is None


def test_regions_are_disjoint():
    r = Regions(_fieldset())
    for a in r.names:
        for b in r.names:
            if a != b:
                assert not np.any(r.shell[a] & r.shell[b])
                assert not np.any(r.inside[a] & r.shell[b])


def _model(shape=(60, 50, 40), bc=10):
    return SimpleNamespace(grid=SimpleNamespace(shape=shape, boundary_cells=bc))


def test_lattice_uses_every_node_when_the_budget_allows():
    lat = lt.plan_lattice(_model(), n_modes=5, budget_bytes=2.0 ** 30)
    assert lat.stride == 1 and lat.lo == (10, 10, 10) and lat.counts == (40, 30, 20)


def test_lattice_coarsens_to_fit_the_budget():
    full = lt.field_bytes(40 * 30 * 20, 5)
    lat = lt.plan_lattice(_model(), n_modes=5, budget_bytes=full / 3)
    assert lat.stride == 2
    assert lt.field_bytes(lat.n_points, 5) <= full / 3
    assert lat.box() == ((10, 10, 10), (48, 38, 28))


def test_budget_too_small_for_any_field_is_one_line():
    with pytest.raises(RingprintError) as err:
        lt.plan_lattice(_model(), n_modes=3, budget_bytes=1000)
    msg = str(err.value)
    assert "\n" not in msg and "output.field_memory" in msg and "--no-fields" in msg


def test_shares_on_a_graded_lattice_are_volume_fractions():
    """A uniform field over a graded lattice: each part's share is its node volume over
    the whole lattice's (by construction, computed here from the coordinates), not its
    node count; a 2:1 spread of cell sizes would make a count wrong by tens of percent."""
    ax = graded_nodes(H, 2 * H, 1.25, 10, 8)
    n = ax.size
    shape = (n, n, n)
    fine = np.zeros(shape, bool)
    fine[2:6, 2:6, 2:6] = True                    # in the fine cells
    coarse = np.zeros(shape, bool)
    coarse[-6:-2, -6:-2, -6:-2] = True            # in the coarse cells
    fs = FieldSet(ax, ax, ax, eps_r=np.ones(shape, np.float32), sigma=np.zeros(shape, np.float32),
                  pec=np.zeros(shape, bool), parts={"fine": fine, "coarse": coarse})
    assert not fs.uniform
    e = np.zeros((3,) + shape, np.complex64)
    e[0] = 1.0
    p = participation(fs, ModeField(1, 1e9, 50.0, e, np.zeros_like(e)))
    w = np.empty(n)
    w[1:-1] = 0.5 * (ax[2:] - ax[:-2])
    w[0], w[-1] = ax[1] - ax[0], ax[-1] - ax[-2]
    vol = w[:, None, None] * w[None, :, None] * w[None, None, :]
    for name, mask in (("fine", fine), ("coarse", coarse)):
        assert p["detail"][name]["electric_inside"] == pytest.approx(vol[mask].sum() / vol.sum(), rel=1e-9)
    assert p["detail"]["coarse"]["electric_inside"] > 6 * p["detail"]["fine"]["electric_inside"]


def test_graded_shell_is_counted_in_grid_cells():
    """The shell is SHELL_CELLS (= 2) lattice steps around the part in index space, on the
    fine and on the coarse side alike, whatever the steps measure in metres."""
    ax = graded_nodes(H, 2 * H, 1.25, 10, 8)
    n = ax.size
    shape = (n, n, n)
    plate = np.zeros(shape, bool)
    plate[5:n - 5, 5:n - 5, 12:14] = True          # straddles fine, transition and coarse along x, y
    fs = FieldSet(ax, ax, ax, eps_r=np.ones(shape, np.float32), sigma=np.zeros(shape, np.float32),
                  pec=plate.copy(), parts={"plate": plate}, conductors=("plate",))
    r = Regions(fs)
    above = r.shell["plate"][n // 2, n // 2, :]
    assert list(np.flatnonzero(above)) == [10, 11, 14, 15]
    beside = r.shell["plate"][:, n // 2, 12]
    assert list(np.flatnonzero(beside)) == [3, 4, n - 5, n - 4]
