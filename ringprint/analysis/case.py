"""The case file: one TOML file that describes an assembly and what to analyse.

Keys (every length in ``units``; a frequency is a number in Hz or a string with a
unit such as ``"2.4 GHz"``)::

    title = "Asset tag"                 # optional; default: the file name without suffix
    units = "mm"                        # required: m, cm, mm, um, in or mil
    band_presets = ["lte-b7", "gps-l1"] # optional: band presets (ringprint.analysis.bands)

    [spectrum]                          # required
    f_min = "0.6 GHz"
    f_max = "6 GHz"
    loss_at = "1.9 GHz"                 # optional: where loss tangents hold exactly
                                        # (default sqrt(f_min f_max) to 4 digits, see materials)
    [[part]]                            # one or more
    name = "housing"
    file = "tag/housing.step"           # relative to the case file
    material = "pc-abs"                 # a library name, or a table:
    # material = { eps_r = 3.0, loss_tangent = 0.01 }   (+ optional name, at = "1 GHz")
    # material = { eps_r = 3.0, sigma = 0.002 }         conductivity in S/m instead
    # material = { conductor = true, sigma = 5.8e7 }    a metal with conductor loss (S/m,
    #                                   > 0; + optional mu_r of its surface layer, default 1);
    # material = { conductor = true }   or "pec": the lossless perfect conductor
    translate = [0, 0, 0]               # optional, default no move
    rotate = { axis = [0, 0, 1], degrees = 0 }          # optional, about the origin
    scale = 1.0                         # optional
    mirror = "none"                     # optional: "x", "y", "z" (negate that coordinate)
    overlap_rank = 0                    # optional: where parts overlap, the higher wins
    body = "Frame Left"                 # optional: only this body of a file holding several

    [[assembly]]                        # optional: one file, many bodies, parts by name rules
    file = "tag/handset.step"           # (placement keys and overlap_rank as for a part;
    prefix = ""                         #  see ringprint.analysis.assembly for the rules)
    [[assembly.rule]]                   # one or more, first match wins
    match = "frame*"                    # shell-style name pattern, any case; or a list
    material = "pec"                    # as for a part, or "skip" to leave the bodies out

    [[band]]                            # optional: custom bands
    name = "telemetry"
    low = "2.30 GHz"
    high = "2.32 GHz"

    [probe]                             # optional; without it the run picks a position
    at = [12.0, 4.0, 3.5]
    normal = "z"                        # x, y or z: the loop's axis
    size = 2.0                          # loop side; default two air cells, 2 c/(f_max n)

    [grid]                              # optional
    cells_per_wavelength = 20           # n, in the densest material at f_max
    padding = 15.0                      # default lambda/(2 pi) at sqrt(f_min f_max)
    cpml_cells = 10                     # thickness of the absorbing layer (CPML), in cells
    graded = true                       # grade the grid to the parts (false: uniform)
    min_feature = 0.25                  # walls, gaps, slots thinner than this stay sub-cell
                                        # (default: a tenth of the air cell, c0/(10 f_max n))
    symmetry = { x = "pec" }            # mirror planes through the model's centre: "pec",
                                        # "pmc" or "both" per axis (ringprint.analysis.symmetry)

    [analysis]                          # optional
    q_max = 200                         # highest Q to resolve (>= 1)
    detuning_margin = 0.03              # fraction; see ringprint.analysis.bands
    grid_check = false                  # true: run again on a coarser grid for each mode's
                                        # grid uncertainty; 3: on two coarser grids
                                        # (ringprint.analysis.uncertainty)
    stop_when_converged = true          # end the ring-down once the modes are stable
                                        # (ringprint.analysis.convergence)

    [output]                            # optional
    fields = true                       # write per-mode field files
    images = true                       # write mode pictures
    field_memory = 1024                 # MiB the mode fields may take (coarser lattice beyond)
    port_impedance = 50                 # ohm: reference of the probe's S11 (probe.s11.s1p)

    [tolerance]                         # optional; and per part: tolerance = { ... }
    position = 0.1                      # see ringprint.analysis.tolerance (offset, eps_r %)

At least one part, from ``[[part]]`` or ``[[assembly]]``; part names are unique.
Renamed keys (the old name still works, with a note in ``Case.notes``): ``bands`` ->
``band_presets``, ``priority`` -> ``overlap_rank``, ``[grid] absorber_cells`` ->
``cpml_cells`` (the name modes.json uses).
A part's mesh coordinates (in ``units``) are scaled, then mirrored, rotated about the
origin and translated, in that order (:meth:`Part.matrix`).

Default padding: the radiansphere radius ``lambda/(2 pi)`` at the geometric centre
frequency (Wheeler 1947: the reactive near field of a small resonator lies mostly
inside it), so the absorbing layer does not load the near field.
"""

from __future__ import annotations

import math
import os
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.constants import c as C0

from ringprint.analysis import _case_io, assembly
from ringprint.analysis._case_checks import Checker
from ringprint.analysis._case_material import read_material
from ringprint.analysis._case_symmetry import parse_symmetry
from ringprint.analysis._units import LENGTH_UNITS
from ringprint.analysis.bands import DEFAULT_MARGIN, Band, preset_bands, preset_renamed
from ringprint.analysis.materials import Material, conversion_frequency
from ringprint.analysis.tolerance import Tolerances, parse_tolerances
from ringprint.analysis.uncertainty import check_grid_study
from ringprint.errors import RingprintError

__all__ = ["Case", "Part", "Probe", "Spectrum", "Grid", "Analysis", "Output", "load_case"]

TOP_KEYS = ("title", "units", "band_presets", "spectrum", "part", "assembly", "band", "probe", "grid",
            "analysis", "output", "tolerance")
AXES = assembly.AXES
#: Default memory for the mode fields (MiB), case key output.field_memory.
DEFAULT_FIELD_MEMORY_MB = 1024.0


@dataclass(frozen=True)
class Spectrum:
    """Analysed frequencies (Hz) and the frequency where loss tangents hold exactly."""

    f_min_hz: float
    f_max_hz: float
    loss_at_hz: float


@dataclass(frozen=True)
class Part:
    """One part: its mesh file, material and placement (lengths in metres)."""

    name: str
    file: Path                     #: absolute path of the mesh/CAD file
    material: Material
    material_name: str | None      #: the library name as written, None for a table
    file_unit_m: float             #: metres per length unit of the mesh file
    translate_m: tuple[float, float, float] = (0.0, 0.0, 0.0)
    rotate_axis: tuple[float, float, float] = (0.0, 0.0, 1.0)
    rotate_degrees: float = 0.0
    scale: float = 1.0
    mirror: str | None = None      #: "x", "y", "z" or None
    overlap_rank: int = 0          #: where parts overlap, the higher rank wins
    body: str | None = None        #: the one body of ``file`` this part is; None: all of them

    def matrix(self) -> np.ndarray:
        """4x4 affine map from mesh-file coordinates to metres (scale, mirror, rotate, move)."""
        linear = np.eye(3) * (self.scale * self.file_unit_m)
        if self.mirror is not None:
            linear[AXES.index(self.mirror)] *= -1.0
        axis = np.asarray(self.rotate_axis) / np.linalg.norm(self.rotate_axis)
        angle = math.radians(self.rotate_degrees)
        cross = np.array([[0, -axis[2], axis[1]], [axis[2], 0, -axis[0]], [-axis[1], axis[0], 0]])
        rotation = np.eye(3) + math.sin(angle) * cross + (1 - math.cos(angle)) * cross @ cross
        out = np.eye(4)
        out[:3, :3] = rotation @ linear
        out[:3, 3] = self.translate_m
        return out


@dataclass(frozen=True)
class Probe:
    """A small loop probe: centre (m), axis ("x", "y" or "z") and side (m)."""

    at_m: tuple[float, float, float]
    normal: str
    size_m: float


@dataclass(frozen=True)
class Grid:
    """Grid wishes: cells per wavelength at f_max (in each material on a graded grid,
    in the densest one on a uniform grid), air padding between the parts and the
    absorbing layer (m), that layer's thickness in cells, whether to grade the grid
    to the parts, and the smallest feature (m) the graded grid resolves."""

    cells_per_wavelength: float
    padding_m: float
    absorber_cells: int
    graded: bool = True
    min_feature_m: float = 0.0
    symmetry: tuple = ()           #: ``(axis, "pec" | "pmc" | "both")`` mirror planes


@dataclass(frozen=True)
class Analysis:
    """The highest Q to resolve (sets the record length), the detuning margin (fraction),
    the number of grids of the grid study (0: none, 2 or 3) and whether the ring-down
    ends once its modes are stable."""

    q_max: float
    detuning_margin: float
    grid_check: int = 0
    stop_when_converged: bool = True


@dataclass(frozen=True)
class Output:
    """Switches for the optional outputs: per-mode field files and mode pictures, and the
    memory (bytes) the mode fields may take; the reference resistance (ohm) of the
    probe's S11."""

    fields: bool
    images: bool
    field_memory_bytes: float = DEFAULT_FIELD_MEMORY_MB * 2.0 ** 20
    port_impedance_ohm: float = 50.0


@dataclass(frozen=True)
class Case:
    """A validated case, SI throughout; see the module docstring for the file format."""

    source: Path                   #: absolute path of the case file
    title: str
    units: str
    unit_m: float
    spectrum: Spectrum
    parts: tuple[Part, ...]
    band_presets: tuple[str, ...]
    custom_bands: tuple[Band, ...]
    probe: Probe | None
    grid: Grid
    analysis: Analysis
    output: Output
    notes: tuple[str, ...] = ()    #: deprecation notes (old key names), each once
    tolerances: Tolerances = Tolerances()  #: [tolerance] and per-part tolerance (SI)

    @property
    def bands(self) -> tuple[Band, ...]:
        """Every band to judge against: the presets' bands, then the custom ones."""
        return tuple(b for name in self.band_presets for b in preset_bands(name)) + self.custom_bands

    def medium(self, part: Part) -> tuple[float, float, bool]:
        """``(eps_r, sigma_S_per_m, is_pec)`` of a part as the solver uses it."""
        m = part.material
        if m.is_pec:
            return 1.0, 0.0, True
        return m.eps_r, m.conductivity(self.spectrum.loss_at_hz), False

    def resolved(self, relative_to=None) -> dict:
        """The case as it will be run, all defaults filled in, in the user's units (part
        files relative to the folder ``relative_to`` when given, else absolute)."""
        return _case_io.resolved_dict(self, relative_to)

    def resolved_toml(self, relative_to=None) -> str:
        """:meth:`resolved` as TOML text (for ``case.resolved.toml`` in the folder
        ``relative_to``); loads back to the same case."""
        return _case_io.to_toml(self.resolved(relative_to))

    def digest(self) -> str:
        """Stable SHA-256 (hex) of everything that changes the simulated fields.

        Covers the spectrum, every part (name, file *contents*, placement, medium as the
        solver sees it), the probe, the grid and ``q_max``, all in SI; not the title,
        bands, margin or output switches, and not where the files live. Equal digests
        mean a checkpoint can be reused.
        """
        return _case_io.digest(self)


def load_case(path: str | os.PathLike) -> Case:
    """Read and validate a case file.

    Parameters
    ----------
    path : str or path-like
        The TOML case file.

    Returns
    -------
    Case
        Frozen, SI units, absolute file paths.

    Raises
    ------
    RingprintError
        One line ``FILE:LINE: WHERE key 'KEY': problem; fix`` for every defect.
    """
    display = os.fspath(path)
    source = Path(path).expanduser().resolve()
    try:
        text = source.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise RingprintError(f"{display}: case file not found (looked for {source})") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise RingprintError(f"{display}: cannot read the case file: {exc}") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise RingprintError(_case_io.syntax_message(display, str(exc))) from None
    return _build(Checker(display, text, TOP_KEYS + ("bands",)), data, source)


def _build(ck: Checker, data: dict, source: Path) -> Case:
    data = ck.renamed(data, (), "bands", "band_presets")
    ck.table(data, (), TOP_KEYS)
    title = ck.string(data["title"], ("title",)) if "title" in data else source.stem
    units = ck.choice(ck.require(data, "units", ()), ("units",), LENGTH_UNITS)
    unit = LENGTH_UNITS[units]
    spectrum = _spectrum(ck, ck.require(data, "spectrum", ()))
    parts = _parts(ck, data, source.parent, unit)
    presets, custom = _bands(ck, data)
    grid = _grid(ck, data.get("grid", {}), spectrum, unit)
    probe = _probe(ck, data["probe"], spectrum, grid, unit) if "probe" in data else None
    table = ck.table(data.get("analysis", {}), ("analysis",),
                     ("q_max", "detuning_margin", "grid_check", "stop_when_converged"))
    analysis = Analysis(
        q_max=ck.number(table.get("q_max", 200.0), ("analysis", "q_max"), low=1.0,
                        hint="Q below 1 is not a resonance"),
        detuning_margin=ck.number(table.get("detuning_margin", DEFAULT_MARGIN),
                                  ("analysis", "detuning_margin"), low=0.0, high=1.0,
                                  high_open=True, hint="a fraction: write 0.03 for 3 %"),
        grid_check=_grid_check(ck, table.get("grid_check", False), grid),
        stop_when_converged=ck.boolean(table.get("stop_when_converged", True),
                                       ("analysis", "stop_when_converged")))
    table = ck.table(data.get("output", {}), ("output",), ("fields", "images", "field_memory",
                                                                   "port_impedance"))
    output = Output(fields=ck.boolean(table.get("fields", True), ("output", "fields")),
                    images=ck.boolean(table.get("images", True), ("output", "images")),
                    field_memory_bytes=2.0 ** 20 * ck.positive(
                        table.get("field_memory", DEFAULT_FIELD_MEMORY_MB), ("output", "field_memory"),
                        hint="mebibytes, e.g. 1024"),
                    port_impedance_ohm=ck.positive(table.get("port_impedance", 50.0),
                                                   ("output", "port_impedance"), hint="ohm, e.g. 50"))
    return Case(source, title, units, unit, spectrum, parts, presets, custom, probe, grid,
                analysis, output, tuple(ck.notes),
                parse_tolerances(ck, data, parts, unit))


#: Widest f_max / f_min one run covers: the source pulse (a Gaussian-modulated sine,
#: -10 dB at both edges) keeps the whole span above -20 dB up to a ratio of about 25
#: (measured: -17.6 dB at 20, -20.8 dB at 30, from the pulse's own FFT).
MAX_SPAN = 20.0


def _spectrum(ck: Checker, table) -> Spectrum:
    ck.table(table, ("spectrum",), ("f_min", "f_max", "loss_at"))
    f_min = ck.frequency(ck.require(table, "f_min", ("spectrum",)), ("spectrum", "f_min"))
    f_max = ck.frequency(ck.require(table, "f_max", ("spectrum",)), ("spectrum", "f_max"))
    if f_min >= f_max:
        ck.fail(("spectrum", "f_min"), f"f_min ({f_min:g} Hz) must be below f_max ({f_max:g} Hz)")
    if f_max > MAX_SPAN * f_min:
        ck.fail(("spectrum", "f_max"), f"f_max / f_min = {f_max / f_min:.3g} is above {MAX_SPAN:g}: one "
                "pulse cannot drive the whole span (its low end falls below -20 dB); split it "
                "into two cases, e.g. up to and above the geometric mean")
    # the default, sqrt(f_min f_max), to 4 digits: the resolved case shows what was used
    loss_at = ck.frequency(table["loss_at"], ("spectrum", "loss_at")) if "loss_at" in table \
        else float(f"{conversion_frequency(f_min, f_max):.4g}")
    return Spectrum(f_min, f_max, loss_at)


PART_KEYS = ("name", "file", "material", "body") + assembly.PLACEMENT_KEYS + ("overlap_rank", "tolerance")


def _parts(ck: Checker, data: dict, folder: Path, unit: float) -> tuple[Part, ...]:
    value, groups = data.get("part"), data.get("assembly")
    if (value is None or value == []) and not groups:
        ck.fail(("part",), "the case has no parts; add at least one [[part]] with name, file "
                "and material, or an [[assembly]] with its rules")
    if not isinstance(value, (list, type(None))):
        ck.fail(("part",), "write each part as its own [[part]] table (double brackets)")
    if not isinstance(groups, (list, type(None))):
        ck.fail(("assembly",), "write each assembly as its own [[assembly]] table (double brackets)")
    parts, seen = [], {}
    for i, table in enumerate(value or []):
        here = ("part", i)
        ck.label(here, table)
        table = ck.renamed(table, here, "priority", "overlap_rank")
        ck.table(table, here, PART_KEYS)
        name = ck.string(ck.require(table, "name", here), here + ("name",))
        if name in seen:
            ck.fail(here + ("name",), f"a part named {name!r} already exists ({seen[name]}); give "
                    "each part its own name")
        seen[name] = f"[[part]] {i + 1}"
        parts.append(_part(ck, table, here, name, folder, unit))
    for i, table in enumerate(groups or []):
        parts += _assembly(ck, table, ("assembly", i), folder, unit, seen)
    return tuple(parts)


def _part(ck: Checker, table: dict, here: tuple, name: str, folder: Path, unit: float) -> Part:
    file = assembly.part_file(ck, table, here, folder)
    body = None
    if "body" in table:
        body = ck.string(table["body"], here + ("body",))
        names = assembly.body_names(ck, file, here + ("file",))
        if body not in names:
            ck.fail(here + ("body",), f"{file.name} holds no body named {body!r}; its bodies are "
                    f"{assembly.name_list(names)}")
    material, material_name = read_material(ck, ck.require(table, "material", here),
                                        here + ("material",))
    placement = assembly.placement(ck, table, here, unit)
    rank = ck.number(table.get("overlap_rank", 0), here + ("overlap_rank",), integer=True)
    return Part(name, file, material, material_name, unit, **placement, overlap_rank=rank, body=body)


def _assembly(ck: Checker, table, here: tuple, folder: Path, unit: float, seen: dict) -> list[Part]:
    """The parts of one ``[[assembly]]`` (rules: :mod:`ringprint.analysis.assembly`)."""
    table = ck.renamed(table, here, "priority", "overlap_rank")
    ck.table(table, here, assembly.ASSEMBLY_KEYS)
    file = assembly.part_file(ck, table, here, folder)
    ck.labels[here] = file.name
    placement = assembly.placement(ck, table, here, unit)
    parts, materials = [], {}
    for taken in assembly.expand(ck, table, here, file):
        written = taken.material
        if written == assembly.SKIP:
            continue
        if taken.name in seen:
            ck.fail(taken.rule + ("match",), f"body {taken.body!r} makes a part named {taken.name!r}, "
                    f"which already exists ({seen[taken.name]}); set prefix = \"...\" on this rule "
                    "or the assembly, or rename the other part")
        seen[taken.name] = f"{ck.where(here)} body {taken.body!r}"
        if taken.rule not in materials:
            materials[taken.rule] = read_material(ck, written, taken.rule + ("material",))
        parts.append(Part(taken.name, file, *materials[taken.rule], unit, **placement,
                          overlap_rank=taken.overlap_rank, body=taken.body))
    return parts


def _bands(ck: Checker, data: dict) -> tuple[tuple[str, ...], tuple[Band, ...]]:
    names = data.get("band_presets", [])
    if not isinstance(names, list):
        ck.fail(("band_presets",), "expected a list of preset names, e.g. [\"lte-b7\", \"gps-l1\"]")
    taken: set[str] = set()
    for i, name in enumerate(names):
        ck.string(name, ("band_presets", i))
        try:
            bands = preset_bands(name)
        except RingprintError as exc:
            ck.fail(("band_presets", i), str(exc))
        taken.update(b.name for b in bands)
        if preset_renamed(name):
            ck.notes.append(f"{ck.file}: band preset {name!r} is now called "
                            f"{preset_renamed(name)!r}; the old name still works for now, rename it")
    custom = data.get("band", [])
    if not isinstance(custom, list):
        ck.fail(("band",), "write each custom band as its own [[band]] table (double brackets)")
    bands = []
    for i, table in enumerate(custom):
        here = ("band", i)
        ck.label(here, table)
        ck.table(table, here, ("name", "low", "high", "source"))
        name = ck.string(ck.require(table, "name", here), here + ("name",))
        if name in taken:
            ck.fail(here + ("name",), f"a band named {name!r} is already selected; rename it")
        taken.add(name)
        low = ck.frequency(ck.require(table, "low", here), here + ("low",))
        high = ck.frequency(ck.require(table, "high", here), here + ("high",))
        if low >= high:
            ck.fail(here + ("low",), f"low ({low:g} Hz) must be below high ({high:g} Hz)")
        source = ck.string(table.get("source", "case file"), here + ("source",))
        bands.append(Band(name, low, high, source))
    return tuple(preset_renamed(n) or n for n in names), tuple(bands)


def _grid(ck: Checker, table, spectrum: Spectrum, unit: float) -> Grid:
    table = ck.renamed(table, ("grid",), "absorber_cells", "cpml_cells")
    ck.table(table, ("grid",), ("cells_per_wavelength", "padding", "cpml_cells", "graded",
                                "min_feature", "symmetry"))
    cells = ck.number(table.get("cells_per_wavelength", 20), ("grid", "cells_per_wavelength"),
                      low=10.0, hint="the solver needs at least 10 cells per wavelength in the "
                      "densest material at f_max (10-20 is common practice)")
    centre = math.sqrt(spectrum.f_min_hz * spectrum.f_max_hz)
    padding = ck.positive(table["padding"], ("grid", "padding")) * unit if "padding" in table \
        else C0 / (2 * math.pi * centre)
    absorber = ck.number(table.get("cpml_cells", 10), ("grid", "cpml_cells"),
                         low=4, integer=True, hint="4-16 cells is common practice")
    graded = ck.boolean(table.get("graded", True), ("grid", "graded"))
    min_feature = ck.positive(table["min_feature"], ("grid", "min_feature"),
                              hint="a length in the case units, e.g. a tenth of the air cell") * unit \
        if "min_feature" in table else C0 / (spectrum.f_max_hz * cells) / 10
    symmetry = parse_symmetry(ck, table["symmetry"]) if "symmetry" in table else ()
    return Grid(float(cells), padding, absorber, graded, min_feature, symmetry)


def _grid_check(ck: Checker, value, grid: Grid) -> int:
    """``grid_check``: false (0), true (2 grids) or 3; the coarsest grid must stay usable."""
    if isinstance(value, bool):
        grids = 2 if value else 0
    elif isinstance(value, int) and value in (2, 3):
        grids = value
    else:
        ck.fail(("analysis", "grid_check"), f"expected true, false or 3 (grids), got {value!r}")
    problem = check_grid_study(grid.cells_per_wavelength, grids)
    if problem:
        ck.fail(("analysis", "grid_check"), problem)
    return grids


def _probe(ck: Checker, table, spectrum: Spectrum, grid: Grid, unit: float) -> Probe:
    ck.table(table, ("probe",), ("at", "normal", "size"))
    at = ck.vector3(ck.require(table, "at", ("probe",)), ("probe", "at"))
    normal = ck.choice(ck.require(table, "normal", ("probe",)), ("probe", "normal"), AXES)
    size = ck.positive(table["size"], ("probe", "size")) * unit if "size" in table \
        else 2 * C0 / (spectrum.f_max_hz * grid.cells_per_wavelength)
    return Probe(tuple(v * unit for v in at), normal, size)
