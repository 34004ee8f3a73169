"""The CPU Yee/FDTD engine: grids, media, sources, pickups, CPML, time stepping.

Plain numpy arrays in, time series out; see DEVELOPERS.md for the array layout.
"""

from ringprint.fdtd.cpml import CpmlSettings
from ringprint.fdtd.dft import NodeDft
from ringprint.fdtd.grid import C0, EPS0, MU0, Grid, courant_time_step
from ringprint.fdtd.media import Media
from ringprint.fdtd.pickups import FieldPickup, LoopEmfPickup
from ringprint.fdtd.simulation import Simulation
from ringprint.fdtd.sources import DipoleSource, GaussianPulse, LoopSource

__all__ = ["C0", "EPS0", "MU0", "CpmlSettings", "DipoleSource", "FieldPickup", "GaussianPulse",
           "Grid", "LoopEmfPickup", "LoopSource", "Media", "NodeDft", "Simulation", "courant_time_step"]
