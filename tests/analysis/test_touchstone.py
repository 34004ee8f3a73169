"""Touchstone in and out: every option-line variant reads back the same reflection, and
each malformed file is one line naming the line number (Touchstone File Format
Specification 2.0, IBIS Open Forum 2009: option line ``# <unit> <parameter> <format>
R <n>``, 1-port rows ``f a b``, 2-port rows ``f S11 S21 S12 S22``)."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.analysis import cli
from ringprint.analysis.touchstone import read_reflection, write_s1p
from ringprint.errors import RingprintError

F = np.linspace(1.0e9, 3.0e9, 41)
S = 0.8 * np.exp(-1j * 2 * np.pi * F / 1.3e9) * (0.5 + 0.4 * np.cos(F / 2e8))


def _pair(s, form):
    """One complex value as the two numbers of a format (spec: MA degrees, DB = 20 log10)."""
    if form == "RI":
        return s.real, s.imag
    if form == "MA":
        return abs(s), np.degrees(np.angle(s))
    return 20 * np.log10(abs(s)), np.degrees(np.angle(s))


def write_text(path, unit, form, r_ref=None, parameter="S", rows=None):
    scale = {"Hz": 1.0, "kHz": 1e3, "MHz": 1e6, "GHz": 1e9}[unit]
    ref = "" if r_ref is None else f" R {r_ref}"
    lines = ["! written by the test, by hand from the specification", f"# {unit} {parameter} {form}{ref}"]
    for f, s in zip(F, S) if rows is None else rows:
        a, b = _pair(s, form)
        lines.append(f"{f / scale:.15g} {a:.15g} {b:.15g}   ! a trailing comment")
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.mark.parametrize("unit", ["Hz", "kHz", "MHz", "GHz"])
@pytest.mark.parametrize("form", ["RI", "MA", "DB"])
def test_every_option_line_variant_reads_the_same_reflection(tmp_path, unit, form):
    r = read_reflection(write_text(tmp_path / "m.s1p", unit, form, r_ref=75))
    np.testing.assert_allclose(r.f_hz, F, rtol=1e-13)
    np.testing.assert_allclose(r.s, S, rtol=0, atol=1e-12)
    assert r.z0 == 75.0


def test_defaults_of_a_short_option_line_and_lower_case(tmp_path):
    """'# mhz' alone means S, MA and R 50 (the specification's defaults)."""
    p = tmp_path / "m.s1p"
    p.write_text("# mhz\n" + "".join(f"{f / 1e6:.15g} {abs(s):.15g} {np.degrees(np.angle(s)):.15g}\n"
                                     for f, s in zip(F, S)))
    r = read_reflection(p)
    np.testing.assert_allclose(r.s, S, atol=1e-12)
    assert r.z0 == 50.0


def test_written_s1p_reads_back(tmp_path):
    path = write_s1p(tmp_path / "probe.s11.s1p", F, S, 42.0, comments=["a note"])
    text = path.read_text()
    assert text.splitlines()[0] == "!a note"
    assert "# Hz S RI R 42" in text
    r = read_reflection(path)
    np.testing.assert_allclose(r.s, S, atol=1e-11)
    assert r.z0 == 42.0


def test_two_port_file_gives_the_chosen_reflection(tmp_path):
    p = tmp_path / "m.s2p"
    rows = [f"{f:.15g} {s.real:.15g} {s.imag:.15g} 0.1 0 0.1 0 {(-s).real:.15g} {(-s).imag:.15g}"
            for f, s in zip(F, S)]
    p.write_text("# Hz S RI R 50\n" + "\n".join(rows) + "\n" + "1e9 1.0 0.5 0.3 10\n")   # a noise row
    np.testing.assert_allclose(read_reflection(p, 1).s, S, atol=1e-12)
    np.testing.assert_allclose(read_reflection(p, 2).s, -S, atol=1e-12)


def _lines(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text)
    return p


BAD = {
    "no option line": ("m.s1p", "! nothing\n1e9 0.1 0.2\n2e9 0.1 0.2\n", "line 2: data before the option line"),
    "truncated row": ("m.s1p", "# Hz S RI\n1e9 0.1 0.2\n2e9 0.1\n3e9 0.1 0.2\n", "line 3: 2 values"),
    "frequencies fall": ("m.s1p", "# Hz S RI\n1e9 0.1 0.2\n3e9 0.1 0.2\n2e9 0.1 0.2\n",
                         "line 4: frequency 2e+09 does not increase"),
    "repeated frequency": ("m.s1p", "# Hz S RI\n1e9 0.1 0.2\n1e9 0.1 0.2\n", "line 3: frequency"),
    "2-port rows in a 1-port file": ("m.s1p", "# Hz S RI\n1e9 1 2 3 4 5 6 7 8\n",
                                     "line 2: 9 values, a 2-port row, in a 1-port file"),
    "not a number": ("m.s1p", "# Hz S RI\n1e9 0.1 abc\n", "line 2: 'abc' is not a number"),
    "unknown option word": ("m.s1p", "# GHz S XY R 50\n1 0.1 0.2\n", "line 1: unknown word 'XY'"),
    "only comments": ("m.s1p", "! empty\n", "no option line"),
    "wrong name": ("m.txt", "# Hz S RI\n1e9 0.1 0.2\n", "not a Touchstone file name"),
    "v2 cut short": ("m.s1p", "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 1\n[Network Data]\n"
                     "1e9 0.1 0.2\n2e9 0.1\n[End]\n", "line 6: the last row has 2 of its 3 values"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_malformed_file_is_one_line_naming_the_line(tmp_path, case):
    name, text, expected = BAD[case]
    with pytest.raises(RingprintError) as info:
        read_reflection(_lines(tmp_path, name, text))
    assert expected in str(info.value)
    assert "\n" not in str(info.value)


def test_two_port_file_without_a_port_is_refused(tmp_path):
    p = _lines(tmp_path, "m.s2p", "# Hz S RI\n1e9 1 2 3 4 5 6 7 8\n2e9 1 2 3 4 5 6 7 8\n")
    with pytest.raises(RingprintError, match="2-port file where one reflection is expected"):
        read_reflection(p)


@pytest.mark.parametrize("case", ["no option line", "truncated row", "frequencies fall",
                                  "2-port rows in a 1-port file"])
def test_match_command_prints_one_line_and_exits_non_zero(tmp_path, capsys, case):
    """Bad input through the CLI: exit 1, one line on stderr, no traceback."""
    name, text, expected = BAD[case]
    run_dir = tmp_path / "run"
    run_dir.mkdir()
    (run_dir / "modes.json").write_text('{"modes": []}')
    code = cli.main(["match", str(run_dir), str(_lines(tmp_path, name, text))])
    err = capsys.readouterr().err
    assert code == 1
    assert err.count("\n") == 1 and expected in err and "Traceback" not in err
