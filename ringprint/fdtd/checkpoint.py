"""Checkpoints: the full state of a :class:`Simulation` in one HDF5 file.

Stored: grid axes, media index arrays and tables, settings, sources and pickups
(as JSON text, never pickled), the six fields, the CPML psi arrays, the records,
the step index and the energy-guard state. The file is written under a temporary
name and renamed when complete.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import h5py
import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd.conformal import ConformalFaces
from ringprint.fdtd.cpml import CpmlSettings
from ringprint.fdtd.grid import AXES, COMPONENTS, Grid
from ringprint.fdtd.media import Media
from ringprint.fdtd.pickups import pickup_from_dict
from ringprint.fdtd.sources import source_from_dict

FORMAT = "ringprint-fdtd-checkpoint"
VERSION = 1


def save(sim, path) -> None:
    """Write ``sim`` to ``path`` (HDF5)."""
    path = Path(path)
    tmp = path.with_name(path.name + ".part")
    n = sim.step_index
    with h5py.File(tmp, "w") as h:
        h.attrs["format"], h.attrs["version"] = FORMAT, VERSION
        settings = {"boundaries": sim.boundaries, "cpml_cells": sim.cpml_cells,
                    "courant": sim.courant, "dtype": sim.dtype.name, "f_max": sim.f_max,
                    "cpml": sim.cpml_settings.to_dict(), "energy_every": sim.energy_every}
        h.attrs["settings"] = json.dumps(settings)
        h.attrs["sources"] = json.dumps([s.to_dict() for s in sim.sources])
        h.attrs["pickups"] = json.dumps([[name, p.to_dict()] for name, p in sim.pickups.items()])
        h.attrs["step_index"] = n
        h.attrs["guard"] = json.dumps([float(sim._guard_min), float(sim._guard_peak)])
        for a, v in zip(AXES, sim.grid.nodes):
            h[f"grid/{a}"] = v
        for a, v in zip(AXES, sim.media.index):
            h[f"media/index_{a}"] = v
        h["media/eps_r_table"] = sim.media.eps_r_table
        h["media/sigma_table"] = sim.media.sigma_table
        cf = sim.media.conformal
        if cf is not None:
            for key, v in cf.arrays().items():
                h[f"media/conformal/{key}"] = v
            h["media/conformal"].attrs["step_factor"] = cf.step_factor
            h["media/conformal"].attrs["enlarged"] = cf.enlarged
        for c in COMPONENTS:
            h[f"fields/{c}"] = sim.fields[c]
        for i, p in enumerate(sim.psi_arrays):
            h[f"psi/{i}"] = p
        h["records/pickups"] = sim._rec[:n]
        h["records/energy"] = sim._energy[:n]
    os.replace(tmp, path)


def load(cls, path):
    """Rebuild a simulation saved by :func:`save`."""
    path = Path(path)
    if not path.is_file():
        raise RingprintError(f"checkpoint {path}: no such file; give the path written by save_checkpoint")
    try:
        h = h5py.File(path, "r")
    except OSError as exc:
        raise RingprintError(f"checkpoint {path}: not a readable HDF5 file ({exc})") from None
    with h:
        if h.attrs.get("format") != FORMAT:
            raise RingprintError(f"checkpoint {path}: not a ringprint solver checkpoint")
        st = json.loads(h.attrs["settings"])
        grid = Grid(*(h[f"grid/{a}"][...] for a in AXES))
        conformal = None
        if "media/conformal" in h:
            g = h["media/conformal"]
            conformal = ConformalFaces(**{k: g[k][...] for k in ConformalFaces.empty(1).arrays()},
                                       step_factor=float(g.attrs["step_factor"]),
                                       enlarged=int(g.attrs["enlarged"]))
        media = Media.from_tables(grid, [h[f"media/index_{a}"][...] for a in AXES],
                                  h["media/eps_r_table"][...], h["media/sigma_table"][...],
                                  conformal)
        sim = cls(grid, media, boundaries=st["boundaries"], cpml_cells=st["cpml_cells"],
                  courant=st["courant"], dtype=np.dtype(st["dtype"]), f_max=st["f_max"],
                  cpml=CpmlSettings(**st["cpml"]), energy_every=st["energy_every"])
        for d in json.loads(h.attrs["sources"]):
            sim.add_source(source_from_dict(d))
        for name, d in json.loads(h.attrs["pickups"]):
            sim.add_pickup(pickup_from_dict(d), name)
        for c in COMPONENTS:
            sim.fields[c][...] = h[f"fields/{c}"][...]
        psi = sim.psi_arrays
        if len(psi) != len(h["psi"]) if "psi" in h else len(psi) != 0:
            raise RingprintError(f"checkpoint {path}: CPML layout does not match its settings")
        for i, p in enumerate(psi):
            p[...] = h[f"psi/{i}"][...]
        n = int(h.attrs["step_index"])
        sim._grow(n)
        sim._rec[:n] = h["records/pickups"][...]
        sim._energy[:n] = h["records/energy"][...]
        sim.step_index = n
        sim._guard_min, sim._guard_peak = json.loads(h.attrs["guard"])
    return sim
