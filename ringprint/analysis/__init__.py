"""The job layer: case file, harmonic inversion, reports and the CLI."""

from ringprint.analysis.inversion import Resonance, harmonic_inversion
from ringprint.analysis.matrix_pencil import matrix_pencil

__all__ = ["Resonance", "harmonic_inversion", "matrix_pencil"]
