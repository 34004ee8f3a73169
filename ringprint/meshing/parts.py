"""One call from a file to checked surfaces in metres (read, transform, check)."""

from ringprint.errors import RingprintError
from ringprint.meshing.checks import prepare_surface
from ringprint.meshing.read import read_surfaces
from ringprint.meshing.transform import transform_surface, unit_scale


def place_parts(surfaces, unit="m", conductor=False, scale=1.0, mirror=None, rotate=None,
                translate=None, hole_size=None):
    """Apply unit and transforms to surfaces as read, then check and orient each.

    Parameters are those of :func:`transform_surface` and :func:`prepare_surface`
    (``hole_size`` in metres). The input surfaces are not changed (one read of an
    assembly file can feed several parts).

    Returns
    -------
    list of Surface
        Checked (``kind`` "solid" or "sheet"), coordinates in metres.
    """
    unit_scale(unit)  # refuse an unknown unit before any work
    out = []
    for s in surfaces:
        s = transform_surface(s, unit=unit, scale=scale, mirror=mirror, rotate=rotate, translate=translate)
        out.append(prepare_surface(s, conductor=conductor, hole_size=hole_size))
    return out


def pick_body(surfaces, body, path):
    """The one surface of ``surfaces`` named ``body`` (a one-element list).

    Raises
    ------
    RingprintError
        No body of that name in the file (it changed since the case was written).
    """
    chosen = [s for s in surfaces if s.name == body]
    if not chosen:
        names = ", ".join(repr(s.name) for s in surfaces[:8]) + (" ..." if len(surfaces) > 8 else "")
        raise RingprintError(f"{path}: holds no body named {body!r} (it has {names}); check the "
                             "body name, or re-export the file with that name")
    return chosen


def load_parts(path, unit="m", conductor=False, cell_size=None, scale=1.0, mirror=None,
               rotate=None, translate=None, hole_size=None, body=None):
    """Read every body of ``path`` (or only the one named ``body``), apply unit and
    transforms, check and orient it.

    Parameters are those of :func:`read_surfaces`, :func:`transform_surface` and
    :func:`prepare_surface` (``hole_size`` in metres). The unit is validated even
    for CAD files, whose own unit wins.

    Returns
    -------
    list of Surface
        Checked (``kind`` "solid" or "sheet"), coordinates in metres.

    Raises
    ------
    RingprintError
        Any problem with the file, the unit, the body name, the transform or the surface.
    """
    unit_scale(unit)  # refuse an unknown unit before reading anything
    surfaces = read_surfaces(path, cell_size=cell_size)
    if body is not None:
        surfaces = pick_body(surfaces, body, path)
    return place_parts(surfaces, unit=unit, conductor=conductor, scale=scale, mirror=mirror,
                       rotate=rotate, translate=translate, hole_size=hole_size)
