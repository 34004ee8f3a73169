"""The job layer: case file, harmonic inversion, band judgement, bounds, reports and the CLI."""

from ringprint.analysis.bands import Band, judge, preset_bands, preset_names, rank_hazards
from ringprint.analysis.bounds import chu_q, enclosing_sphere
from ringprint.analysis.case import Case, load_case
from ringprint.analysis.inversion import Resonance, harmonic_inversion
from ringprint.analysis.materials import Material, get_material, library
from ringprint.analysis.matrix_pencil import matrix_pencil

__all__ = ["Band", "Case", "Material", "Resonance", "chu_q", "enclosing_sphere", "get_material",
           "harmonic_inversion", "judge", "library", "load_case", "matrix_pencil", "preset_bands",
           "preset_names", "rank_hazards"]
