"""The job layer: case file, harmonic inversion, band judgement, bounds, mode fields,
participation, touch maps, reports and the CLI."""

from ringprint.analysis.bands import Band, judge, preset_bands, preset_names, rank_hazards
from ringprint.analysis.bounds import chu_q, enclosing_sphere
from ringprint.analysis.case import Case, load_case
from ringprint.analysis.fieldset import FieldSet, ModeField, TouchMap
from ringprint.analysis.fieldset_io import read_fieldset, write_fieldset
from ringprint.analysis.inversion import Resonance, harmonic_inversion
from ringprint.analysis.materials import Material, get_material, library
from ringprint.analysis.matrix_pencil import matrix_pencil
from ringprint.analysis.participation import participation
from ringprint.analysis.separation import separate
from ringprint.analysis.tissue import tissue_permittivity
from ringprint.analysis.touch import perturbation_shift, touch_map

__all__ = ["Band", "Case", "FieldSet", "Material", "ModeField", "Resonance", "TouchMap", "chu_q",
           "enclosing_sphere", "get_material", "harmonic_inversion", "judge", "library", "load_case",
           "matrix_pencil", "participation", "perturbation_shift", "preset_bands", "preset_names",
           "rank_hazards", "read_fieldset", "separate", "tissue_permittivity", "touch_map",
           "write_fieldset"]
