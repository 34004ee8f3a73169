"""Write and read ``fields.h5`` and write one VTK file per mode.

The HDF5 layout is documented in :mod:`ringprint.analysis.fieldset`; layout 1 files
(uniform lattices, before graded grids) are read as well. The per-mode VTK file is
``mode_NN.vti`` (VTK image data: origin and one spacing) on a uniform lattice and
``mode_NN.vtr`` (VTK rectilinear grid: the three node coordinate vectors) on a graded
one, with the same point arrays. Files are written under a temporary name and renamed
when complete.
"""

from __future__ import annotations

from pathlib import Path

import h5py
import numpy as np

from ringprint import __version__
from ringprint.analysis.fieldset import LAYOUT, READABLE_LAYOUTS, FieldSet, ModeField, TouchMap
from ringprint.analysis.outputs import atomic_path
from ringprint.errors import RingprintError

FIELDS_NAME = "fields.h5"
#: Suffixes of the per-mode VTK files: uniform lattice, graded lattice.
IMAGE_SUFFIX, RECTILINEAR_SUFFIX = ".vti", ".vtr"


def mode_key(index: int) -> str:
    return f"mode_{index:02d}"


def write_fieldset(path, fs: FieldSet) -> Path:
    """Write ``fs`` to ``path`` (HDF5, layout :data:`~ringprint.analysis.fieldset.LAYOUT`)."""
    path = Path(path)
    with atomic_path(path) as tmp, h5py.File(tmp, "w") as f:
        f.attrs["layout"] = LAYOUT
        f.attrs["ringprint_version"] = __version__
        f.attrs["case_digest"] = fs.digest
        f.attrs["decimation"] = int(fs.decimation)
        f.attrs["uniform"] = np.uint8(fs.uniform)
        f.attrs["step_min_m"] = fs.min_step
        f.attrs["step_max_m"] = fs.max_step
        f.attrs["part_names"] = list(fs.parts)
        f.attrs["conductors"] = list(fs.conductors)
        if fs.probe is not None:
            f.attrs["probe_center_m"] = np.asarray(fs.probe["center_m"], float)
            f.attrs["probe_normal"] = str(fs.probe["normal"])
            f.attrs["probe_size_m"] = float(fs.probe["size_m"])
        for name, v in zip("xyz", (fs.x, fs.y, fs.z)):
            f.create_dataset(f"axes/{name}", data=np.asarray(v, np.float64))
        opts = {"compression": "gzip", "compression_opts": 4, "shuffle": True}
        f.create_dataset("media/eps_r", data=fs.eps_r.astype(np.float32), **opts)
        f.create_dataset("media/sigma", data=fs.sigma.astype(np.float32), **opts)
        f.create_dataset("media/pec", data=fs.pec.astype(np.uint8), **opts)
        parts = f.create_group("parts")
        for name, mask in fs.parts.items():
            parts.create_dataset(name, data=mask.astype(np.uint8), **opts)
        modes = f.create_group("modes")
        for m in fs.modes:
            g = modes.create_group(mode_key(m.index))
            g.attrs["index"] = int(m.index)
            g.attrs["frequency_hz"] = float(m.frequency_hz)
            g.attrs["q"] = float(m.q)
            g.create_dataset("E", data=m.e.astype(np.complex64), **opts)
            g.create_dataset("H", data=m.h.astype(np.complex64), **opts)
        touch = f.create_group("touch")
        for index, t in fs.touch.items():
            g = touch.create_group(mode_key(index))
            g.create_dataset("points", data=np.asarray(t.points, np.float64))
            g.create_dataset("normals", data=np.asarray(t.normals, np.float64))
            g.create_dataset("shift_percent", data=np.asarray(t.shift_percent, np.float64))
            g.create_dataset("q_after", data=np.asarray(t.q_after, np.float64))
    return path


def read_fieldset(path) -> FieldSet:
    """Read a ``fields.h5`` written by :func:`write_fieldset`.

    Raises
    ------
    RingprintError
        When the file is missing, unreadable, or of another layout version.
    """
    path = Path(path)
    if not path.is_file():
        raise RingprintError(f"{path}: no mode fields here (the run skipped them with --no-fields, or "
                             "an older ringprint wrote these results); run the case again with fields")
    try:
        f = h5py.File(path, "r")
    except OSError as exc:
        raise RingprintError(f"{path}: not a readable HDF5 file ({exc}); run the case again") from None
    with f:
        layout = f.attrs.get("layout")
        layout = layout.item() if isinstance(layout, np.generic) else layout   # 3, not np.int64(3)
        if layout not in READABLE_LAYOUTS:
            raise RingprintError(f"{path}: field file layout {layout!r}, this ringprint reads layouts "
                                 f"{', '.join(map(str, READABLE_LAYOUTS))}; run the case again with "
                                 "this version")
        try:
            return _read(f)
        except KeyError as exc:
            raise RingprintError(f"{path}: incomplete field file ({exc}); run the case again") from None


def _read(f) -> FieldSet:
    probe = None
    if "probe_center_m" in f.attrs:
        probe = {"center_m": [float(v) for v in f.attrs["probe_center_m"]],
                 "normal": str(f.attrs["probe_normal"]), "size_m": float(f.attrs["probe_size_m"])}
    names = [str(n) for n in f.attrs["part_names"]]
    modes = []
    for key in sorted(f["modes"]):
        g = f["modes"][key]
        modes.append(ModeField(int(g.attrs["index"]), float(g.attrs["frequency_hz"]),
                               float(g.attrs["q"]), g["E"][()], g["H"][()]))
    touch = {}
    for key in f["touch"]:
        g = f["touch"][key]
        touch[int(key.split("_")[1])] = TouchMap(g["points"][()], g["normals"][()],
                                                 g["shift_percent"][()], g["q_after"][()])
    return FieldSet(x=f["axes/x"][()], y=f["axes/y"][()], z=f["axes/z"][()],
                    eps_r=f["media/eps_r"][()], sigma=f["media/sigma"][()],
                    pec=f["media/pec"][()].astype(bool),
                    parts={n: f["parts"][n][()].astype(bool) for n in names},
                    conductors=tuple(str(c) for c in f.attrs["conductors"]), modes=modes,
                    touch=touch, decimation=int(f.attrs["decimation"]), probe=probe,
                    digest=str(f.attrs["case_digest"]))


def mode_suffix(fs: FieldSet) -> str:
    """``.vti`` for a uniform lattice, ``.vtr`` for a graded one."""
    return IMAGE_SUFFIX if fs.uniform else RECTILINEAR_SUFFIX


def lattice_dataset(fs: FieldSet, roi=(slice(None),) * 3):
    """An empty pyvista dataset over the lattice nodes ``roi`` (three index ranges): an
    ImageData on a uniform lattice, a RectilinearGrid on a graded one. Its points run
    x fastest (flatten node arrays with ``order="F"``)."""
    import pyvista as pv

    axes = [np.asarray(a[r], float) for a, r in zip((fs.x, fs.y, fs.z), roi)]
    if fs.uniform:
        step = fs.spacing
        return pv.ImageData(dimensions=tuple(a.size for a in axes), spacing=(step,) * 3,
                            origin=tuple(float(a[0]) for a in axes))
    return pv.RectilinearGrid(*axes)


def mode_image(fs: FieldSet, mode: ModeField):
    """The VTK dataset of one mode (:func:`lattice_dataset`): |E|, |H|, energy density,
    Re/Im of E and H, eps_r, part index."""
    img = lattice_dataset(fs)

    def flat(a):  # VTK point order: x fastest; vectors as (n, 3)
        a = np.asarray(a)
        return a.ravel(order="F") if a.ndim == 3 else np.stack([c.ravel(order="F") for c in a], axis=1)

    img.point_data["E_magnitude"] = flat(np.sqrt(np.sum(np.abs(mode.e) ** 2, axis=0))).astype(np.float32)
    img.point_data["H_magnitude"] = flat(np.sqrt(np.sum(np.abs(mode.h) ** 2, axis=0))).astype(np.float32)
    img.point_data["energy_density"] = flat(fs.energy_density(mode)).astype(np.float32)
    img.point_data["E_real"] = flat(mode.e.real).astype(np.float32)
    img.point_data["E_imag"] = flat(mode.e.imag).astype(np.float32)
    img.point_data["H_real"] = flat(mode.h.real).astype(np.float32)
    img.point_data["H_imag"] = flat(mode.h.imag).astype(np.float32)
    img.point_data["eps_r"] = flat(fs.eps_r).astype(np.float32)
    part_id = np.zeros(fs.shape, np.int16)
    for k, mask in enumerate(fs.parts.values(), start=1):
        part_id[mask] = k
    img.point_data["part"] = flat(part_id)
    img.field_data["frequency_hz"] = np.array([mode.frequency_hz])
    img.field_data["q"] = np.array([mode.q])
    img.field_data["part_names"] = np.array(list(fs.parts) or [""])
    return img


def write_mode_files(out_dir, fs: FieldSet) -> list[Path]:
    """One ``mode_NN.vti`` (uniform lattice) or ``mode_NN.vtr`` (graded) per mode in
    ``out_dir`` (VTK XML, any VTK viewer)."""
    written = []
    for m in fs.modes:
        path = Path(out_dir) / f"{mode_key(m.index)}{mode_suffix(fs)}"
        with atomic_path(path) as tmp:
            mode_image(fs, m).save(tmp, binary=True)
        written.append(path)
    return written
