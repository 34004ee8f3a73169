"""Units and rigid/scaling transforms of surfaces."""

import numpy as np

from ringprint.errors import RingprintError

#: Length of one file unit in metres. "in" is the international inch (25.4 mm exactly),
#: "mil" a thousandth of it (NIST SP 811, 2008, appendix B).
UNITS = {"m": 1.0, "mm": 1e-3, "um": 1e-6, "in": 0.0254, "mil": 0.0254e-3}


def unit_scale(unit):
    """Metres per file unit.

    Parameters
    ----------
    unit : str
        One of ``m``, ``mm``, ``um``, ``in``, ``mil``.

    Returns
    -------
    float
    """
    key = str(unit).strip().lower()
    if key not in UNITS:
        raise RingprintError(f"unknown length unit {unit!r}: use one of {', '.join(UNITS)}")
    return UNITS[key]


def rotation_matrix(axis, degrees):
    """Right-handed rotation by ``degrees`` about ``axis`` (Rodrigues' formula).

    Parameters
    ----------
    axis : str or sequence of 3 floats
        ``"x"``, ``"y"``, ``"z"`` or a direction vector (need not be unit length).
    degrees : float

    References
    ----------
    Rodrigues, O., J. Math. Pures Appl. 5:380-440, 1840.
    """
    if isinstance(axis, str):
        key = axis.strip().lower()
        if key not in ("x", "y", "z"):
            raise RingprintError(f"unknown rotation axis {axis!r}: use 'x', 'y', 'z' or a vector")
        k = np.eye(3)["xyz".index(key)]
    else:
        k = np.asarray(axis, np.float64).reshape(-1)
        n = np.linalg.norm(k) if k.shape == (3,) else 0.0
        if not np.isfinite(n) or n == 0.0:
            raise RingprintError(f"rotation axis {list(np.ravel(axis))} is not a non-zero 3-vector: "
                                 "give three finite numbers or 'x'/'y'/'z'")
        k = k / n
    th = np.deg2rad(float(degrees))
    kx = np.array([[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]])
    return np.eye(3) + np.sin(th) * kx + (1 - np.cos(th)) * kx @ kx


def transform_surface(surface, unit="m", scale=1.0, mirror=None, rotate=None, translate=None):
    """Apply unit, scale, mirror, rotations and translation, in that order.

    Parameters
    ----------
    surface : Surface
        As read (coordinates in file units).
    unit : str
        Unit of the file's numbers (see :data:`UNITS`); the result is in metres.
        Ignored (after validation) when the file fixes its own unit
        (``surface.file_unit``, e.g. STEP/IGES read in millimetres).
    scale : float or sequence of 3 floats
        Scale factor(s) about the origin, applied after the unit.
    mirror : str or None
        ``"x"``, ``"y"`` or ``"z"``: reflect through the plane normal to that axis
        (through the origin). Faces are re-wound so orientation is kept.
    rotate : None, (axis, degrees) or a list of such pairs
        Rotations about axes through the origin, applied in the order given.
    translate : sequence of 3 floats or None
        Shift in metres, applied last.

    Returns
    -------
    Surface
        New surface in metres; the input is not modified.
    """
    u = unit_scale(unit)
    if surface.file_unit is not None:
        u = unit_scale(surface.file_unit)
    v = np.array(surface.vertices, np.float64) * u
    s = np.broadcast_to(np.asarray(scale, np.float64), (3,)) if np.ndim(scale) <= 1 else None
    if s is None or s.shape != (3,) or not np.all(np.isfinite(s)) or np.any(s == 0):
        raise RingprintError(f"scale {scale!r} must be a non-zero finite number or three of them")
    v = v * s
    flips = int(np.sum(s < 0))
    if mirror is not None:
        key = str(mirror).strip().lower()
        if key not in ("x", "y", "z"):
            raise RingprintError(f"unknown mirror axis {mirror!r}: use 'x', 'y' or 'z'")
        v[:, "xyz".index(key)] *= -1.0
        flips += 1
    if rotate is not None:
        single = (len(rotate) == 2 and np.isscalar(rotate[1])
                  and (isinstance(rotate[0], str) or np.ndim(rotate[0]) == 1))
        for pair in ([rotate] if single else rotate):
            if len(pair) != 2:
                raise RingprintError(f"rotation {pair!r} must be (axis, degrees)")
            v = v @ rotation_matrix(*pair).T
    if translate is not None:
        t = np.asarray(translate, np.float64).reshape(-1)
        if t.shape != (3,) or not np.all(np.isfinite(t)):
            raise RingprintError(f"translate {translate!r} must be three finite numbers (metres)")
        v = v + t
    faces = surface.faces
    if flips % 2 == 1:  # a reflection turns the winding inside out: swap two corners
        faces = faces[:, [0, 2, 1]]
    return surface.with_(vertices=v, faces=np.ascontiguousarray(faces), file_unit="m",
                         volume=abs(surface.volume) * abs(float(np.prod(s))) * u ** 3)
