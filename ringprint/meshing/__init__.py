"""Geometry layer: read parts, check them, plan the grid, voxelize onto Yee edges.

Knows no Maxwell equations; it answers "how much of this Yee edge lies inside that
part". Coordinates are metres once :func:`transform_surface` has applied the unit.
"""

from ringprint.meshing.checks import HOLE_FRACTION, MeshingWarning, prepare_surface
from ringprint.meshing.conformal import conformal_fractions, edge_lines
from ringprint.meshing.features import GAP_CELLS, WALL_CELLS, Refinement, find_features
from ringprint.meshing.graded import GRADING, plan_axis
from ringprint.meshing.grid import (Grid, available_memory, cell_size, check_memory, default_padding,
                                    memory_estimate, plan_grid, thickness, warn_thin_parts)
from ringprint.meshing.overlap import resolve_overlaps
from ringprint.meshing.parts import load_parts, pick_body, place_parts
from ringprint.meshing.read import (CAD_EXTENSIONS, MESH_EXTENSIONS, body_labels, body_names,
                                    read_surfaces)
from ringprint.meshing.surface import Surface, signed_volume
from ringprint.meshing.transform import UNITS, rotation_matrix, transform_surface, unit_scale
from ringprint.meshing.voxelize import (EdgeBox, PartFill, dual_nodes, edge_fractions, surface_cuts,
                                        voxelize)

__all__ = [
    "CAD_EXTENSIONS", "EdgeBox", "GAP_CELLS", "GRADING", "Grid", "HOLE_FRACTION",
    "MESH_EXTENSIONS", "MeshingWarning", "PartFill", "Refinement", "Surface", "UNITS", "WALL_CELLS",
    "available_memory", "body_labels", "body_names", "cell_size", "check_memory",
    "conformal_fractions", "default_padding", "dual_nodes", "edge_fractions", "edge_lines",
    "find_features", "load_parts", "memory_estimate", "pick_body", "place_parts", "plan_axis",
    "plan_grid",
    "prepare_surface", "read_surfaces", "resolve_overlaps", "rotation_matrix", "signed_volume",
    "surface_cuts", "thickness", "transform_surface", "unit_scale", "voxelize", "warn_thin_parts",
]
