"""Test utility: a closed cylindrical PEC cavity on a Yee grid, conformal or staircased.

The cavity (radius a, length d along z, axis at x = y = 0) is cut out of metal that
fills the rest of a PEC-walled box; its end caps lie on grid planes, so only the
curved wall tests the metal treatment. The inside fractions of the cylinder are the
free fractions of the metal (:func:`ringprint.meshing.conformal_fractions`).
"""

from __future__ import annotations

import numpy as np

from ringprint import fdtd
from ringprint.meshing import conformal_fractions, primitives

E_COMPS, H_COMPS = ("Ex", "Ey", "Ez"), ("Hx", "Hy", "Hz")


def _full(grid, boxes, comps):
    out = []
    for axis, comp in zip("xyz", comps):
        v = np.zeros(grid.component_shape(comp), np.float32)
        v[boxes[axis].slices] = boxes[axis].data
        out.append(v)
    return tuple(out)


def cavity(radius, length, cells_per_radius, conformal=True, offset=(0.0, 0.0), caps=None):
    """``(grid, media)`` of the cavity; ``offset`` moves the axis off the grid lines
    (in cells). With ``caps`` (a fraction of a cell) the end caps are metal too, that far
    past a node plane, instead of the domain's PEC walls on grid planes."""
    h = radius / cells_per_radius
    n = int(np.ceil(radius / h)) + 2
    xs = h * (np.arange(-n, n + 1) - offset[0])
    ys = h * (np.arange(-n, n + 1) - offset[1])
    if caps is None:
        z = np.linspace(0.0, length, int(round(length / h)) + 1)
        tube = primitives.cylinder(radius, length + 4 * h, centre=(0, 0, length / 2), n=256)
    else:
        z = h * (np.arange(-2, int(np.ceil(length / h)) + 3) + caps)
        tube = primitives.cylinder(radius, length, centre=(0, 0, length / 2), n=256)
    grid = fdtd.Grid(xs, ys, z)
    lines, faces = conformal_fractions(tube.with_(kind="solid"), xs, ys, z)
    free_length, free_area = _full(grid, lines, E_COMPS), _full(grid, faces, H_COMPS)
    if not conformal:   # the unbiased staircase: PEC where the edge is at least half in metal
        return grid, fdtd.Media(grid, pec=tuple(v < 0.5 for v in free_length))
    return grid, fdtd.Media(grid, pec=tuple(v <= 1e-6 for v in free_length),
                            free_length=free_length, free_area=free_area)


def sphere_cavity(radius, cells_per_radius, conformal=True):
    """``(grid, media)`` of a closed spherical cavity cut out of metal, centred off the
    grid's nodes (offsets 0.23, 0.34, 0.16 cells) so that every cut is oblique."""
    h = radius / cells_per_radius
    n = int(cells_per_radius) + 2
    ax = h * (np.arange(-n, n + 1) + 0.23)
    grid = fdtd.Grid(ax, ax + 0.11 * h, ax - 0.07 * h)
    ball = primitives.sphere(radius, n=192).with_(kind="solid")
    lines, faces = conformal_fractions(ball, *grid.nodes)
    free_length, free_area = _full(grid, lines, E_COMPS), _full(grid, faces, H_COMPS)
    if not conformal:
        return grid, fdtd.Media(grid, pec=tuple(v < 0.5 for v in free_length))
    return grid, fdtd.Media(grid, pec=tuple(v <= 1e-6 for v in free_length),
                            free_length=free_length, free_area=free_area)


def ringdown(grid, media, source_at, pickup_at, f_ref, steps):
    """``[(frequency, amplitude)]`` of the poles within 15 % of ``f_ref`` of an Ez
    dipole's ring-down seen by Ez and Ex pickups, sorted by frequency."""
    from ringprint.analysis import harmonic_inversion
    sim = fdtd.Simulation(grid, media, boundaries="pec", dtype=np.float64)
    sim.add_source(fdtd.DipoleSource(source_at, "Ez", fdtd.GaussianPulse(0.7 * f_ref, 1.3 * f_ref)))
    sim.add_pickup(fdtd.FieldPickup("Ez", pickup_at), "p")
    sim.add_pickup(fdtd.FieldPickup("Ex", pickup_at), "q")
    sim.run(steps)
    rec = sim.records()
    start = int(np.searchsorted(rec["time"], sim.source_end_time))
    modes = harmonic_inversion(np.stack([rec["p"][start:], rec["q"][start:]]), sim.dt,
                               0.85 * f_ref, 1.15 * f_ref)
    return sorted((float(m.frequency_hz), float(np.abs(m.amplitude).max())) for m in modes)


def tm010_frequency(grid, media, radius, f_ref, steps=5000, mid_z=None):
    """The ring-down frequency nearest ``f_ref`` of an Ez dipole inside the cavity."""
    from ringprint.analysis import harmonic_inversion
    length = 2 * mid_z if mid_z is not None else grid.z[-1]
    sim = fdtd.Simulation(grid, media, boundaries="pec", dtype=np.float64)
    sim.add_source(fdtd.DipoleSource((0.3 * radius, 0.1 * radius, length / 2), "Ez",
                                     fdtd.GaussianPulse(0.6 * f_ref, 1.4 * f_ref)))
    sim.add_pickup(fdtd.FieldPickup("Ez", (-0.2 * radius, 0.15 * radius, length / 2)), "p")
    sim.run(steps)
    rec = sim.records()
    start = int(np.searchsorted(rec["time"], sim.source_end_time))
    modes = harmonic_inversion(rec["p"][start:], sim.dt, 0.8 * f_ref, 1.2 * f_ref)
    return min((float(m.frequency_hz) for m in modes), key=lambda f: abs(f - f_ref)), sim
