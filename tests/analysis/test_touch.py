"""Touch map (ringprint.analysis.touch) on a hand-built lattice with a box-shaped part.

The closed-form checks of the perturbation formula itself are in
tests/validation/test_touch_perturbation.py; here: the surface found, the normals, the
signs the physics demands (Harrington 1961, sec. 7-2: added permittivity lowers the
frequency; a lossy tissue lowers Q), and that the FFT map equals the direct sum.
"""

from pathlib import Path

import numpy as np
import pytest

from _graded import graded_nodes, mirrored
from ringprint.analysis.fieldset import FieldSet, ModeField
from ringprint.analysis.touch import (FINGERTIP_DEPOLARIZATION, THIN_PAD_DEPOLARIZATION,
                                      ellipsoid_depolarization, exterior_air, perturbation_shift, q_after, shift_percent,
                                      touch_map, touch_maps, touch_points, worst_spots)
from ringprint.errors import RingprintError

N, H = 36, 1e-3
OUTER = (slice(10, 26), slice(12, 24), slice(8, 28))    # the part's nodes
HOLLOW = (slice(13, 23), slice(15, 21), slice(11, 25))  # sealed air inside it
CENTRE = np.array([17.5, 17.5, 17.5]) * H


def _fields(seed: float):
    x = np.arange(N) * H
    X, Y, Z = np.meshgrid(x, x, x, indexing="ij")
    k = 2 * np.pi / (40 * H)
    e = np.stack([np.cos(k * Y + seed) + 0.3j * np.sin(k * Z),
                  np.sin(k * X) * np.exp(1j * k * Z) + 0.2,
                  np.cos(k * (X + Y)) - 0.5j * np.cos(k * Z - seed)]).astype(np.complex64)
    h = (0.003 * np.roll(e, 1, axis=0)).astype(np.complex64)
    return e, h


def _fieldset(parts=True) -> FieldSet:
    solid = np.zeros((N,) * 3, bool)
    if parts:
        solid[OUTER] = True
        solid[HOLLOW] = False
    x = np.arange(N) * H
    modes = [ModeField(i + 1, 2e9 * (1 + 0.2 * i), 300.0, *_fields(0.7 * i)) for i in range(2)]
    eps = np.where(solid, 3.0, 1.0).astype(np.float32)
    return FieldSet(x, x.copy(), x.copy(), eps, np.zeros_like(eps), np.zeros(solid.shape, np.uint8),
                    parts={"can": solid} if parts else {}, modes=modes)


@pytest.fixture(scope="module")
def fs():
    return _fieldset()


@pytest.fixture(scope="module")
def lossless_map(fs):
    return touch_map(fs, 1, tissue=10.0, pad_radius_m=3e-3)


def test_surface_is_the_outside_of_the_part(fs):
    ext = exterior_air(fs)
    assert not ext[HOLLOW].any() and not ext[OUTER].any()
    idx, normals = touch_points(fs)
    assert idx.shape[0] > 0 and idx.shape == normals.shape
    assert np.all(ext[tuple(idx.T)])
    # every face node of the outer box has its touch node: 2 (16*12 + 16*20 + 12*20) of them
    # on the faces (edge and corner neighbours are only diagonal, not 6-neighbours)
    assert idx.shape[0] == 2 * (16 * 12 + 16 * 20 + 12 * 20)


def test_normals_point_outward(fs, lossless_map):
    n, p = lossless_map.normals, lossless_map.points
    assert np.allclose(np.linalg.norm(n, axis=1), 1.0)
    assert np.all(np.einsum("ij,ij->i", n, p - CENTRE) > 0)
    # at the middle of the +x face the normal is +x (geometry of the box)
    mid = np.argmin(np.linalg.norm(p - np.array([26, 17.5, 17.5]) * H, axis=1))
    assert n[mid] == pytest.approx([1, 0, 0], abs=1e-3)


def test_signs(fs, lossless_map):
    """Harrington 1961, sec. 7-2: added (lossless) permittivity lowers every frequency and
    leaves Q alone; a lossy tissue lowers Q everywhere."""
    assert np.all(lossless_map.shift_percent < 0)
    assert np.allclose(lossless_map.q_after, 300.0, rtol=1e-9)
    lossy = touch_map(fs, 1, tissue="skin-dry", pad_radius_m=3e-3)
    assert np.all(lossy.shift_percent < 0) and np.all(lossy.q_after < 300.0)


def _ball_region(fs, point, radius):
    x = fs.x
    X, Y, Z = np.meshgrid(x, x, x, indexing="ij")
    d2 = (X - point[0]) ** 2 + (Y - point[1]) ** 2 + (Z - point[2]) ** 2
    return (d2 <= radius ** 2 * (1 + 1e-9)) & exterior_air(fs)


@pytest.mark.parametrize("radius", [3e-3, 0.4e-3])
def test_map_equals_direct_sum(fs, radius):
    """The FFT-convolved map equals perturbation_shift on the same ball (direct sum), with
    the same local-field correction, to rounding; a radius below one spacing is the node."""
    eps = complex(12.0, 4.0)
    tmap = touch_map(fs, 2, tissue=eps, pad_radius_m=radius)
    q = fs.mode(2).q
    for i in np.linspace(0, tmap.points.shape[0] - 1, 7).astype(int):
        region = _ball_region(fs, tmap.points[i], radius)
        if radius < H:
            assert region.sum() == 1
        delta = perturbation_shift(fs, 2, region, eps, normal=tmap.normals[i],
                                   depolarization=FINGERTIP_DEPOLARIZATION)
        assert tmap.shift_percent[i] == pytest.approx(float(shift_percent(delta, q)), rel=1e-9)
        assert tmap.q_after[i] == pytest.approx(float(q_after(delta, q)), rel=1e-9)


def test_shift_ignores_field_scale(fs):
    """delta is a ratio of two quadratic forms: scaling the fields changes nothing (to the
    float32 rounding of the stored phasors)."""
    m = fs.mode(1)
    region = _ball_region(fs, np.array([27, 17, 17]) * H, 2e-3)
    scaled = ModeField(1, m.frequency_hz, m.q, 3 * m.e, 3 * m.h)
    a = perturbation_shift(fs, m, region, 5 + 1j, normal=(1, 0, 0))
    b = perturbation_shift(fs, scaled, region, 5 + 1j, normal=(2, 0, 0))
    assert a == pytest.approx(b, rel=1e-6) and a.real < 0 and a.imag < 0


def test_touch_maps_and_worst_spots(fs):
    maps = touch_maps(fs, tissue="muscle", pad_radius_m=2e-3)
    assert sorted(maps) == [1, 2]
    tmap = maps[1]
    spots = worst_spots(tmap, n=4, min_separation_m=8e-3, q_before=300.0)
    assert len(spots) == 4
    shifts = [abs(s["shift_percent"]) for s in spots]
    assert shifts == sorted(shifts, reverse=True)
    assert shifts[0] == pytest.approx(np.max(np.abs(tmap.shift_percent)))
    pts = np.array([s["point_m"] for s in spots])
    dist = np.linalg.norm(pts[:, None] - pts[None], axis=2)
    assert np.all(dist[np.triu_indices(4, 1)] >= 8e-3)
    for s in spots:
        assert s["q_drop_percent"] == pytest.approx(100 * (1 - s["q_after"] / 300.0))
        assert s["q_drop_percent"] > 0 and len(s["normal"]) == 3
    assert worst_spots(tmap, n=2)[0]["q_drop_percent"] is None
    assert len(worst_spots(tmap, n=10_000, min_separation_m=0.0)) == tmap.points.shape[0]


def test_errors(fs):
    with pytest.raises(RingprintError, match="no solid part"):
        touch_map(_fieldset(parts=False), 1)
    full = _fieldset()
    full.parts = {"slab": np.ones(full.shape, bool)}
    with pytest.raises(RingprintError, match="no air reaches"):
        touch_map(full, 1)
    with pytest.raises(RingprintError, match="valid tissues"):
        touch_map(fs, 1, tissue="bone_marrowx")
    with pytest.raises(RingprintError, match="pad_radius_m"):
        touch_map(fs, 1, pad_radius_m=-1.0)
    with pytest.raises(RingprintError, match="no mode 9"):
        touch_map(fs, 9)
    region = np.zeros(fs.shape, bool)
    with pytest.raises(RingprintError, match="no node"):
        perturbation_shift(fs, 1, region, 4.0)
    with pytest.raises(RingprintError, match="boolean mask"):
        perturbation_shift(fs, 1, region[:-1], 4.0)
    region[OUTER] = True
    with pytest.raises(RingprintError, match="overlaps a part"):
        perturbation_shift(fs, 1, region, 4.0)
    region = np.zeros(fs.shape, bool)
    region[0, 0, 0] = True
    with pytest.raises(RingprintError, match="normal"):
        perturbation_shift(fs, 1, region, 4.0, normal=(0, 0, 0))
    with pytest.raises(RingprintError, match="imaginary part"):
        perturbation_shift(fs, 1, region, 4.0 - 1j)
    with pytest.raises(RingprintError, match="n must be"):
        worst_spots(touch_map(fs, 1, tissue=4.0, pad_radius_m=0.0), n=0)
    with pytest.raises(RingprintError, match="Q"):
        q_after(-1e-3, 0.0)


def test_depolarization_of_spheroids_against_osborn():
    """Depolarization factors against the closed forms for spheroids (Osborn, J. A., Phys.
    Rev. 67:351-357, 1945; Stratton 1941 sec. 3.27): prolate with axis ratio m > 1,
    ``N_z = (ln(m + sqrt(m^2-1)) m / sqrt(m^2-1) - 1) / (m^2 - 1)``; a sphere 1/3 each;
    the three always sum to 1."""
    for m in (1.5, 3.0, 10.0):
        s = np.sqrt(m * m - 1)
        want = (m / s * np.log(m + s) - 1) / (m * m - 1)
        n = ellipsoid_depolarization(1.0, 1.0, m)
        assert n[2] == pytest.approx(want, rel=1e-10)
        assert sum(n) == pytest.approx(1.0, rel=1e-12)
    assert ellipsoid_depolarization(2.0, 2.0, 2.0) == pytest.approx((1 / 3,) * 3, rel=1e-12)
    n_n, n_t = FINGERTIP_DEPOLARIZATION
    assert n_n + 2 * n_t == pytest.approx(1.0) and n_n > 1 / 3 > n_t


def test_local_field_limits(fs):
    """A thin pad (N_n = 1, N_t = 0) is the default with a normal; an isotropic factor
    scales the whole sum by 1 / (1 + N (eps - 1))."""
    region = np.zeros(fs.shape, bool)
    region[0, 0, 0:2] = True
    eps = 6.0 + 1.0j
    thin = perturbation_shift(fs, 1, region, eps, normal=(0, 0, 1))
    explicit = perturbation_shift(fs, 1, region, eps, normal=(0, 0, 1), depolarization=THIN_PAD_DEPOLARIZATION)
    assert thin == explicit
    bare = perturbation_shift(fs, 1, region, eps)
    sphere = perturbation_shift(fs, 1, region, eps, depolarization=1 / 3)
    assert sphere == pytest.approx(bare / (1 + (eps - 1) / 3), rel=1e-12)
    with pytest.raises(RingprintError):
        perturbation_shift(fs, 1, region, eps, depolarization=1.5)


# --- graded lattices: the direct pad sum -------------------------------------------------

def _graded(h, fine_half, half):
    """Symmetric axis: steps h within +-fine_half, growing by 1.25 per step to 2h, out to
    at least +-half."""
    return mirrored(graded_nodes(h, 2 * h, 1.25, round(fine_half / h), until=half))


def _windowed_fieldset(ax, half, part_half):
    """A cube part of half side ``part_half`` at the centre of a lattice ``ax`` (all three
    axes), and one mode whose smooth E vanishes on the lattice faces (a cos^2 window), so
    the weight of the end nodes cannot matter."""
    X, Y, Z = np.meshgrid(ax, ax, ax, indexing="ij")
    k = 2 * np.pi / 12e-3
    win = (np.cos(np.pi * X / (2 * half)) * np.cos(np.pi * Y / (2 * half)) * np.cos(np.pi * Z / (2 * half))) ** 2
    e = (win * np.stack([np.cos(k * Y) + 0.3j * np.sin(k * Z), np.sin(k * X) + 0.5,
                         np.cos(k * (X + Z)) - 0.4j])).astype(np.complex64)
    inside = np.abs(ax) <= part_half * (1 + 1e-9)
    solid = inside[:, None, None] & inside[None, :, None] & inside[None, None, :]
    shape = solid.shape
    return FieldSet(ax, ax.copy(), ax.copy(), np.ones(shape, np.float32), np.zeros(shape, np.float32),
                    np.zeros(shape, bool), parts={"cube": solid},
                    modes=[ModeField(1, 2e9, 100.0, e, np.zeros_like(e))])


@pytest.mark.parametrize("radius", [3e-3, 0.4e-3])
def test_direct_pad_sum_equals_the_fft_on_a_uniform_lattice(fs, radius):
    """The two ways of summing the pads give the same map on a uniform lattice, to rounding
    (rel 1e-9: float64 sums in another order; the FFT's own rounding is ~1e-13 of the
    largest product)."""
    fft = touch_map(fs, 2, tissue=complex(12.0, 4.0), pad_radius_m=radius, method="fft")
    direct = touch_map(fs, 2, tissue=complex(12.0, 4.0), pad_radius_m=radius, method="direct")
    np.testing.assert_array_equal(fft.points, direct.points)
    np.testing.assert_allclose(direct.shift_percent, fft.shift_percent, rtol=1e-9)
    np.testing.assert_allclose(direct.q_after, fft.q_after, rtol=1e-9)


def test_graded_map_equals_the_volume_weighted_sum_over_each_ball():
    """On a graded lattice (auto: the direct sum) each point's shift equals
    perturbation_shift over its ball of exterior nodes, both weighting nodes by their
    volumes; rel 1e-9 as above."""
    ax = _graded(0.5e-3, 1.5e-3, 6e-3)
    gfs = _windowed_fieldset(ax, 6e-3, 1e-3)
    assert not gfs.uniform
    eps = complex(12.0, 4.0)
    tmap = touch_map(gfs, 1, tissue=eps, pad_radius_m=2e-3)
    for i in np.linspace(0, tmap.points.shape[0] - 1, 6).astype(int):
        delta = perturbation_shift(gfs, 1, _ball_region(gfs, tmap.points[i], 2e-3), eps,
                                   normal=tmap.normals[i], depolarization=FINGERTIP_DEPOLARIZATION)
        assert tmap.shift_percent[i] == pytest.approx(float(shift_percent(delta, 100.0)), rel=1e-9)
    with pytest.raises(RingprintError, match="uniform lattice"):
        touch_map(gfs, 1, tissue=eps, method="fft")
    with pytest.raises(RingprintError, match="pad method"):
        touch_map(gfs, 1, tissue=eps, method="fourier")


def test_graded_touch_shift_converges_to_the_uniform_lattice_answer():
    """A 1.5 mm cube in a 10 mm lattice, fine (step h) within 1 mm of the centre and
    graded (ratio 1.25) to 2h beyond, against the uniform lattice of step h: the touch
    shift of a known smooth field at the middle of the cube's +x face, for a 2 mm pad
    that reaches well into the graded zone. Both are quadratures of the same pad integral
    (Harrington 1961, sec. 7-2, with the node volumes as weights), so their difference
    must shrink as h does: measured 4.8 % at h = 0.25 mm and 0.86 % at 0.125 mm (the
    ball's staircase boundary makes it first order and a little irregular). Bound: below
    1.5 % at the finer step and at least halved from the coarser one."""
    half, part, radius = 5e-3, 0.75e-3, 2e-3
    errors = []
    for h in (0.25e-3, 0.125e-3):
        shifts = []
        for ax in (_graded(h, 1e-3, half), h * np.arange(-round(half / h), round(half / h) + 1)):
            lat = _windowed_fieldset(ax, half, part)
            tmap = touch_map(lat, 1, tissue=10.0, pad_radius_m=radius)
            at = np.argmin(np.linalg.norm(tmap.points - np.array([part, 0.0, 0.0]), axis=1))
            assert tmap.points[at] == pytest.approx([part + h / 2 + h / 2, 0.0, 0.0], abs=1e-9)
            shifts.append(tmap.shift_percent[at])
        errors.append(abs(shifts[0] / shifts[1] - 1.0))
    assert errors[1] < 0.015 and errors[1] < 0.5 * errors[0]


def test_worst_spots_of_the_tag_lie_on_its_outer_surface():
    """The bundled tag's 1.5 mm housing wall sits between the 1.8 mm lattice nodes, so its
    part mask has holes: the touch surface must still be the outside of the housing, not
    the ground-plane edge inside it (issue 13). The lattice, media and part masks are the
    real ones of the case (no run); the field is a blob on the ground plane's -x edge,
    inside the housing, where the old rule put the worst spots. Every worst spot must lie
    outside the housing's outer surface and within one cell of it (the signed distance to
    the housing mesh's outer shell, from pyvista's implicit-distance filter)."""
    import pyvista as pv

    from ringprint.analysis import lattice as lt
    from ringprint.analysis.case import load_case
    from ringprint.analysis.model import build_model
    from ringprint.analysis.touch import worst_spots

    root = Path(__file__).resolve().parents[2]
    model = build_model(load_case(root / "cases" / "tag" / "case.toml"))
    lat = lt.plan_lattice(model, 1, 2.0 ** 30)
    eps_r, sigma, pec = lt.node_media(model, lat)
    axes = [ax[i] for ax, i in zip(model.grid.axes, lat.indices())]
    X, Y, Z = np.meshgrid(*axes, indexing="ij")
    blob = np.exp(-((X + 0.0219) ** 2 + (Y + 0.0109) ** 2 + (Z - 0.0033) ** 2) / (2 * 0.004 ** 2))
    e = np.stack([blob, 0.5 * blob, 0.2 * blob + 0.01]).astype(np.complex64)
    fs = FieldSet(*axes, eps_r=eps_r, sigma=sigma, pec=pec, parts=lt.part_masks(model, lat),
                  modes=[ModeField(1, 2.3e9, 20.0, e, 0.003 * e)])
    spots = worst_spots(touch_map(fs, 1, tissue="skin-dry"), n=5)
    housing = pv.read(str(root / "cases" / "tag" / "housing.stl"))
    shells = housing.connectivity().split_bodies()
    outer = max((s.extract_surface(algorithm="dataset_surface") for s in shells), key=lambda s: s.volume)
    points = np.array([s["point_m"] for s in spots]) * 1e3            # the mesh is in mm
    # signed distance to the outer surface, negative inside (its normals point outward)
    distance = np.asarray(pv.PolyData(points).compute_implicit_distance(outer)["implicit_distance"])
    cell_mm = model.grid.cell * 1e3
    assert len(spots) == 5
    assert np.all(distance > 0), (points, distance)
    assert np.all(distance <= cell_mm), (points, distance, cell_mm)
