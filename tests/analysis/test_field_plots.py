"""Report pictures of one mode (``ringprint.analysis.field_plots``).

The synthetic FieldSet used here (and imported by test_field_views, test_cmd_show
and test_report_fields) is an air-filled PEC box a x b x d with the analytic TE10l
fields (Pozar, D. M., *Microwave Engineering*, 4th ed., Wiley, 2012, section 6.3,
eqs. 6.42a-c, from memory):

    Ey = E0 sin(pi x/a) sin(l pi z/d)
    Hx = -j E0/Z_TE sin(pi x/a) cos(l pi z/d),    Z_TE = k eta / beta, beta = l pi/d
    Hz = j pi E0/(k eta a) cos(pi x/a) sin(l pi z/d)

at f = c k / (2 pi), k^2 = (pi/a)^2 + (l pi/d)^2 (eq. 6.46), scaled so the lattice sum
of the stored energy density is 1 J, as fields.h5 stores them. Three invented parts
(box masks) and an invented touch map sit in it.
"""

from __future__ import annotations

import io

import matplotlib.image as mpimg
import numpy as np
import pytest
from scipy.constants import c as C0, epsilon_0 as EPS0, mu_0 as MU0

from _graded import graded_nodes, mirrored
from ringprint.analysis import field_plots, touch
from ringprint.analysis.fieldset import FieldSet, ModeField, TouchMap
from ringprint.errors import RingprintError

A, B, D, H = 30e-3, 10e-3, 20e-3, 1e-3          # box sides and lattice spacing (m)
PROBE = {"center_m": [6e-3, 5e-3, 10e-3], "normal": "y", "size_m": 3e-3}
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def te10l(x, y, z, l: int):
    """Unnormalized TE10l phasors (E0 = 1 V/m) on the node lattice, and f (Hz)."""
    X, _, Z = np.meshgrid(x, y, z, indexing="ij")
    kx, kz = np.pi / A, l * np.pi / D
    k = np.hypot(kx, kz)
    eta = np.sqrt(MU0 / EPS0)
    z_te = k * eta / kz
    e = np.zeros((3,) + X.shape, complex)
    h = np.zeros_like(e)
    e[1] = np.sin(kx * X) * np.sin(kz * Z)
    h[0] = -1j / z_te * np.sin(kx * X) * np.cos(kz * Z)
    h[2] = 1j * np.pi / (k * eta * A) * np.cos(kx * X) * np.sin(kz * Z)
    return e, h, C0 * k / (2 * np.pi)


def box_mask(x, y, z, lo_mm, hi_mm):
    lo, hi = 1e-3 * np.asarray(lo_mm) - 1e-9, 1e-3 * np.asarray(hi_mm) + 1e-9
    X, Y, Z = np.meshgrid(x, y, z, indexing="ij")
    return ((X >= lo[0]) & (X <= hi[0]) & (Y >= lo[1]) & (Y <= hi[1])
            & (Z >= lo[2]) & (Z <= hi[2]))


def touch_map(fs: FieldSet, mode: ModeField) -> TouchMap:
    """Invented touch map: the lattice's outer nodes every 2 mm; the shift follows
    the local electric energy (the trend of cavity perturbation, Harrington 1961)."""
    idx = np.argwhere(np.ones(fs.shape, bool))
    idx = idx[np.all(idx % 2 == 0, axis=1)]
    n = np.array(fs.shape) - 1
    outer = np.any((idx == 0) | (idx == n), axis=1)
    idx = idx[outer]
    points = np.stack([fs.x[idx[:, 0]], fs.y[idx[:, 1]], fs.z[idx[:, 2]]], axis=1)
    normals = np.zeros_like(points)
    for a in range(3):
        normals[idx[:, a] == 0, a] = -1.0
        normals[idx[:, a] == n[a], a] = 1.0
    normals /= np.linalg.norm(normals, axis=1, keepdims=True)
    we = fs.electric_density(mode)[tuple(idx.T)]
    shift = -0.1 - 3.0 * we / we.max()
    return TouchMap(points, normals, shift, mode.q * (1 + shift / 10))


def graded_axis(length: float) -> np.ndarray:
    """Nodes on [0, length], symmetric about the middle (a node): steps of about H/2
    within length/5 of it, growing by 1.25 per step up to about H."""
    half = length / 2
    return mirrored(graded_nodes(H / 2, H, 1.25, int(np.ceil(length / 5 / (H / 2))), until=half, fit=True), half)


def cavity_fieldset(n_modes: int = 2, graded: bool = False) -> FieldSet:
    """The synthetic FieldSet described in the module docstring (modes 1..n_modes = TE101,
    TE102, ...), on a uniform lattice of step H or on :func:`graded_axis` lattices."""
    if graded:
        x, y, z = (graded_axis(s) for s in (A, B, D))
    else:
        x, y, z = (np.arange(0.0, s + H / 2, H) for s in (A, B, D))
    shape = (x.size, y.size, z.size)
    ring = box_mask(x, y, z, (2, 3, 2), (28, 7, 18)) & ~box_mask(x, y, z, (4, 3, 4), (26, 7, 16))
    parts = {"bezel ring": ring,
             "battery": box_mask(x, y, z, (7, 2, 6), (13, 8, 12)),
             "shield can": box_mask(x, y, z, (17, 1, 7), (23, 5, 13))}
    fs = FieldSet(x=x, y=y, z=z, eps_r=np.ones(shape, np.float32), sigma=np.zeros(shape, np.float32),
                  pec=np.zeros(shape, bool), parts=parts, conductors=("bezel ring", "shield can"),
                  probe=dict(PROBE), digest="synthetic")
    for l, q in zip(range(1, n_modes + 1), (800.0, 650.0, 500.0, 420.0, 380.0, 300.0, 250.0)):
        e, h, f = te10l(x, y, z, l)
        mode = ModeField(l, f, q, e, h)
        scale = 1.0 / np.sqrt(fs.integrate(fs.energy_density(mode)))
        mode.e, mode.h = e * scale, h * scale
        fs.modes.append(mode)
        fs.touch[l] = touch_map(fs, mode)
    return fs


@pytest.fixture(scope="module")
def fs():
    return cavity_fieldset()


def decode(png: bytes) -> np.ndarray:
    assert png.startswith(PNG_SIGNATURE)
    return mpimg.imread(io.BytesIO(png), format="png")


def not_blank(img: np.ndarray, min_std: float = 0.05, min_colours: int = 50) -> None:
    rgb = (255 * img[..., :3]).astype(np.uint8).reshape(-1, 3)
    assert rgb.std() / 255 > min_std
    assert len(np.unique(rgb, axis=0)) >= min_colours


def test_fixture_is_normalized_and_te101_sits_where_pozar_says(fs):
    """1 J per mode (the fields.h5 convention); TE101 at c/2 sqrt(1/a^2 + 1/d^2) (Pozar
    eq. 6.46) with the |E| peak at x = a/2, z = d/2 (eq. 6.42a)."""
    m = fs.mode(1)
    assert fs.energy_density(m).sum() * fs.cell_volume == pytest.approx(1.0, rel=1e-12)
    assert m.frequency_hz == pytest.approx(C0 / 2 * np.hypot(1 / A, 1 / D), rel=1e-12)
    values, label = field_plots.field_quantity(fs, 1, "e")
    i, _, k = field_plots.peak_node(values)
    assert (fs.x[i], fs.z[k]) == pytest.approx((A / 2, D / 2), abs=1e-12)
    assert label == "|E| (V/m), 1 J stored"


def test_quantities_and_their_peaks(fs):
    """|H| of TE101 peaks on the walls: Hx ~ cos(pi z/d) is largest at z = 0, d and
    Hz ~ cos(pi x/a) at x = 0, a (Pozar eqs. 6.42b-c)."""
    h, label = field_plots.field_quantity(fs, fs.mode(1), "h")
    i, _, k = field_plots.peak_node(h)
    assert fs.x[i] in (0.0, pytest.approx(A)) or fs.z[k] in (0.0, pytest.approx(D))
    assert "A/m" in label
    w, label = field_plots.field_quantity(fs, 1, "energy")
    np.testing.assert_allclose(w, fs.energy_density(fs.mode(1)))
    assert "J/m³" in label


def test_bad_quantity_and_mode_are_one_line_errors(fs):
    with pytest.raises(RingprintError, match="quantity 'b' is not known; use one of e, h, energy"):
        field_plots.field_quantity(fs, 1, "b")
    with pytest.raises(RingprintError, match=r"there is no mode 12 \(this result has modes 1-2\)"):
        field_plots.field_picture_png(fs, 12)
    with pytest.raises(RingprintError, match="neither a mode number"):
        field_plots.field_quantity(fs, "1")


def test_probe_corners_make_a_square_in_its_plane():
    corners = field_plots.probe_corners(PROBE)
    assert corners.shape == (4, 3)
    np.testing.assert_allclose(corners[:, 1], PROBE["center_m"][1])   # normal y: y fixed
    np.testing.assert_allclose(corners.mean(axis=0), PROBE["center_m"], atol=1e-15)
    sides = np.linalg.norm(np.diff(np.vstack([corners, corners[:1]]), axis=0), axis=1)
    np.testing.assert_allclose(sides, PROBE["size_m"])
    assert field_plots.probe_corners(None) is None
    with pytest.raises(RingprintError, match="probe"):
        field_plots.probe_corners({"center_m": [0, 0, 0], "normal": "w", "size_m": 1e-3})


@pytest.mark.parametrize("quantity", ["energy", "e"])
def test_field_picture_is_a_small_readable_png(fs, quantity):
    png = field_plots.field_picture_png(fs, fs.mode(2), quantity)
    img = decode(png)
    assert img.shape[:2] == (460, 1000)
    not_blank(img)
    # readable in grey: the luminance alone still spreads widely
    grey = img[..., :3] @ np.array([0.299, 0.587, 0.114])
    assert grey.std() > 0.1
    assert 20_000 < len(png) < 250_000


def test_title_names_mode_frequency_and_q(fs):
    # TE101 of 30 x 20 mm: c/2 sqrt(1/a^2 + 1/d^2) = 9.0076 GHz (Pozar eq. 6.46), 4 digits
    assert field_plots.mode_title(fs.mode(1)) == "mode 1, 9.008 GHz, Q 800"


def test_touch_map_png(fs):
    spots = touch.worst_spots(fs.touch[1], n=3, q_before=fs.mode(1).q)
    png = field_plots.touch_map_png(fs, fs.touch[1], spots, mode=1)
    img = decode(png)
    not_blank(img)
    assert 20_000 < len(png) < 250_000
    np.testing.assert_allclose(field_plots.spot_points(spots), [s["point_m"] for s in spots])


def test_touch_map_refuses_bad_spots_and_empty_maps(fs):
    with pytest.raises(RingprintError, match="worst touch spots are not understood"):
        field_plots.touch_map_png(fs, fs.touch[1], [10_000])
    empty = TouchMap(np.zeros((0, 3)), np.zeros((0, 3)), np.zeros(0), np.zeros(0))
    with pytest.raises(RingprintError, match="no points"):
        field_plots.touch_map_png(fs, empty)


def test_region_of_interest_is_the_parts_box_grown(fs):
    """Battery nodes x 7-13, y 2-8, z 6-12 (1 mm lattice): grown by max(2, 15 % of 6)
    = 2 nodes each side, clipped to the lattice (y starts at 0)."""
    only = cavity_fieldset(1)
    only.parts = {"battery": only.parts["battery"]}
    assert field_plots.region_of_interest(only) == (slice(5, 16), slice(0, 11), slice(4, 15))
    # a node to keep at x = 30 stretches the box to x 7-30, grown by ceil(0.15 * 23) = 4
    roi = field_plots.region_of_interest(only, keep=[(30, 5, 10)])
    assert roi == (slice(3, 31), slice(0, 11), slice(4, 15))
    only.parts = {}
    assert field_plots.region_of_interest(only) == (slice(None),) * 3
    assert field_plots.flat_axis(fs) == 1   # b = 10 mm is the shortest side


def test_graded_lattice_fixture_is_normalized_with_node_volumes():
    """On the graded lattice the 1 J normalization weights every node by its volume: the
    node-volume sum of the stored energy density of TE101 is 1 J (to rounding), and the
    lattice has no single spacing."""
    g = cavity_fieldset(1, graded=True)
    assert not g.uniform and g.max_step / g.min_step > 1.8
    assert float(np.sum(g.energy_density(g.mode(1)) * g.node_volumes())) == pytest.approx(1.0, rel=1e-12)
    with pytest.raises(RingprintError, match="no single spacing"):
        g.spacing
    values, _ = field_plots.field_quantity(g, 1, "e")
    i, _, k = field_plots.peak_node(values)
    assert (g.x[i], g.z[k]) == pytest.approx((A / 2, D / 2), abs=1e-12)   # Pozar eq. 6.42a


def test_field_picture_on_a_graded_lattice_draws_at_the_node_coordinates():
    """A graded lattice is drawn as a mesh on its nodes (pcolormesh), not as an image
    that would spread the nodes evenly; the picture is still a readable PNG."""
    from matplotlib.figure import Figure

    g = cavity_fieldset(1, graded=True)
    fig = Figure()
    ax = fig.add_subplot()
    mesh = field_plots._slice_image(ax, g.x, g.z, np.ones((g.z.size, g.x.size)), g.uniform)
    assert not hasattr(mesh, "get_extent")        # a mesh, not an AxesImage
    np.testing.assert_allclose(np.unique(mesh.get_coordinates()[..., 0]), g.x)
    png = field_plots.field_picture_png(g, 1, "energy")
    img = decode(png)
    assert img.shape[:2] == (460, 1000)
    not_blank(img)
