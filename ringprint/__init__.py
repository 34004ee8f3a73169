"""ringprint: natural resonances of the parts around an antenna.

Three layers, each a subpackage:

- :mod:`ringprint.fdtd` -- the CPU Yee/FDTD engine (numpy arrays in, time series out);
- :mod:`ringprint.meshing` -- surfaces from mesh/CAD files, grid planning, voxelization;
- :mod:`ringprint.analysis` -- the case file, harmonic inversion, reports and the CLI.

``fdtd`` and ``meshing`` never import each other; ``analysis`` composes them.
"""

__version__ = "0.1.0"
