"""Real meshes nobody here wrote: the sample surfaces shipped inside the pyvista
package (read offline from its examples folder), checked against VTK.

References: VTK's vtkMassProperties (pyvista ``PolyData.volume``) for volumes and
vtkFeatureEdges (pyvista ``extract_feature_edges``) for boundary and non-manifold
edges; Schroeder, Martin & Lorensen, *The Visualization Toolkit*, 4th ed., Kitware 2006.
"""

import os

import numpy as np
import pytest
import pyvista as pv
from pyvista import examples

from ringprint.meshing import MeshingWarning, prepare_surface, read_surfaces, voxelize

FOLDER = os.path.dirname(examples.__file__)


def _vtk(name):
    return pv.read(os.path.join(FOLDER, name)).triangulate()


@pytest.mark.parametrize("name", ["ant.ply", "nut.ply", "sphere.ply"])
def test_closed_sample_volume_matches_vtk(name):
    (s,) = [prepare_surface(p) for p in read_surfaces(os.path.join(FOLDER, name))]
    ref = _vtk(name).volume
    assert s.kind == "solid" and s.open_edges == 0
    assert s.volume == pytest.approx(ref, rel=1e-9)  # both exact polyhedron volumes
    lo, hi = s.bounds
    h = float(np.max(hi - lo)) / 40
    axes = [lo[d] - 2.31 * h + h * np.arange(int((hi[d] - lo[d]) / h) + 6) for d in range(3)]
    vox = voxelize(s, *axes).volume(*axes)
    # 40 cells across; thin features (the nut's thread, the ant's legs) limit it: 2 %
    assert max(abs(v / ref - 1) for v in vox.values()) < 0.02, vox


def test_open_edges_match_vtk_feature_edges():
    """The airplane sample is open: our open-edge count (edges not shared by exactly
    two triangles) equals VTK's boundary plus non-manifold edges."""
    ref = _vtk("airplane.ply")
    fe = ref.extract_feature_edges(boundary_edges=True, feature_edges=False, manifold_edges=False,
                                   non_manifold_edges=True)
    (raw,) = read_surfaces(os.path.join(FOLDER, "airplane.ply"))
    with pytest.warns(MeshingWarning, match=f"{fe.n_cells} open edges"):
        s = prepare_surface(raw, hole_size=0.0)
    assert s.open_edges == fe.n_cells > 0
    sheet = prepare_surface(raw, conductor=True)
    assert sheet.kind == "sheet" and sheet.open_edges == fe.n_cells
