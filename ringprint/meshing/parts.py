"""One call from a file to checked surfaces in metres (read, transform, check)."""

from ringprint.meshing.checks import prepare_surface
from ringprint.meshing.read import read_surfaces
from ringprint.meshing.transform import transform_surface, unit_scale


def load_parts(path, unit="m", conductor=False, cell_size=None, scale=1.0, mirror=None,
               rotate=None, translate=None, hole_size=None):
    """Read every body of ``path``, apply unit and transforms, check and orient it.

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
        Any problem with the file, the unit, the transform or the surface.
    """
    unit_scale(unit)  # refuse an unknown unit before reading anything
    out = []
    for s in read_surfaces(path, cell_size=cell_size):
        s = transform_surface(s, unit=unit, scale=scale, mirror=mirror, rotate=rotate, translate=translate)
        out.append(prepare_surface(s, conductor=conductor, hole_size=hole_size))
    return out
