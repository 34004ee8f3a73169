"""The probe-port stage of ``ringprint run``: S11 of the loop probe, its Touchstone
file and its report section.

After the modes are known, :func:`ringprint.analysis.probe_s11.probe_s11` turns the
probe's ring-down into ``Z_in`` and ``S11`` over the band; the run writes
``probe.s11.s1p`` (Touchstone 1.0, Hz, RI, the case's ``output.port_impedance``),
adds ``probe_s11`` to modes.json (file, reference, points, tail share) and gives each
mode ``probe_s11_db``: the lowest |S11| (dB) within the mode's half-power width
``f (1 +- 1/(2Q))``, the dip the bench shows there (the loaded dip sits a little off
the unloaded pole; see :mod:`ringprint.analysis.probe_s11`). The report section shows
|S11| with the modes marked and the bands shaded, and a table of the modes' dips.
"""

from __future__ import annotations

import base64
import html
import logging
from dataclasses import dataclass

import numpy as np

from ringprint.analysis.results import validate_bands
from ringprint.analysis.probe_s11 import FILE_NAME, ProbeS11, probe_s11
from ringprint.analysis.s11_plots import Marks, Trace, render_s11_png
from ringprint.analysis.textformat import format_frequency, format_q
from ringprint.analysis.touchstone import write_s1p

log = logging.getLogger("ringprint.run")


@dataclass
class ProbePort:
    """What the stage made: the S11 trace, its modes.json entry and its HTML section."""

    trace: ProbeS11
    summary: dict
    html: str = ""


def dip_db(trace: ProbeS11, f_hz: float, q: float) -> float:
    """Lowest |S11| (dB) within ``f (1 +- 1/(2Q))`` (the nearest point when none is inside)."""
    half = f_hz / (2.0 * q) if q > 0 and np.isfinite(q) else 0.0
    inside = np.abs(trace.f_hz - f_hz) <= half
    if not inside.any():
        return float(trace.db_at(f_hz))
    return float(np.min(trace.db[inside]))


def run_probe_port(ring, pulse, poles, case, modes, out_dir, bands, notes) -> ProbePort:
    """Compute the probe's S11, write ``probe.s11.s1p``, fill ``probe_s11_db`` per mode."""
    z0 = case.output.port_impedance_ohm
    trace = probe_s11(ring, pulse, poles, case.spectrum.f_min_hz, case.spectrum.f_max_hz, z0)
    write_s1p(out_dir / FILE_NAME, trace.f_hz, trace.s, z0,
              comments=[f"ringprint: simulated S11 of the loop probe, case {case.source.name}",
                        f"reference resistance {z0:g} ohm; open-loop ring-down turned into Z_in = V/I"])
    for m in modes:
        m["probe_s11_db"] = dip_db(trace, m["frequency_hz"], m["q"])
    summary = {"file": FILE_NAME, "reference_ohm": float(z0), "points": int(trace.f_hz.size),
               "f_min_hz": float(trace.f_hz[0]), "f_max_hz": float(trace.f_hz[-1]),
               "tail_share": trace.tail_share, "lowest_db": float(np.min(trace.db))}
    if trace.tail_share > 0.5:
        notes.append(f"probe S11: the run's poles add up to {100 * trace.tail_share:.0f} % of the "
                     "port voltage beyond the record's end; raise analysis.q_max for a longer record")
    log.info("probe S11 written (%s, %d points, reference %g ohm)", FILE_NAME, trace.f_hz.size, z0)
    return ProbePort(trace, summary)


def probe_section(port: ProbePort, modes, bands, images: bool = True) -> str:
    """The report's probe S11 section: picture (when ``images``) and the dip table."""
    e = lambda v: html.escape(str(v), quote=True)  # noqa: E731
    bands = validate_bands(list(bands))
    t = port.trace
    out = ['<h2 id="probe-s11-title">Probe S11 (as on a network analyzer)</h2>',
           f'<p class="muted">The loop probe as a port of {e(f"{t.z0:g}")} ohm: '
           f'S11 = (Z - Z0)/(Z + Z0) with Z = V/I of the loop, its own inductance included; '
           f'written to {e(FILE_NAME)}. Lowest |S11| in the band: {np.min(t.db):.3g} dB (a small '
           f'loop couples weakly: dips of hundredths of a dB are usual).</p>']
    if images:
        png = render_s11_png([Trace("probe |S11| (simulated)", t.f_hz, t.db)],
                             [Marks(0, [(m["index"], m["frequency_hz"]) for m in modes], top=True)], bands)
        out.append(f'<img id="probe-s11" alt="Simulated |S11| of the probe with the modes numbered '
                   f'and the bands shaded" src="data:image/png;base64,'
                   f'{base64.b64encode(png).decode("ascii")}">')
    rows = "".join(f'<tr><td class="num">{e(m["index"])}</td><td class="num">'
                   f'{e(format_frequency(m["frequency_hz"]))}</td><td class="num">{e(format_q(m["q"]))}'
                   f'</td><td class="num">{m["probe_s11_db"]:.3g}</td></tr>' for m in modes)
    out.append('<table id="probe-s11-table"><thead><tr><th>mode</th><th>frequency</th><th>Q</th>'
               f'<th>|S11| dip (dB)</th></tr></thead><tbody>{rows}</tbody></table>')
    return "\n".join(out)
