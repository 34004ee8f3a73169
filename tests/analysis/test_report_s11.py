"""The probe-port stage's pieces: the case key for the reference resistance, the dip
each mode gets, the S11 of a known load (Pozar, Microwave Engineering, 4th ed., 2012,
sec. 4.3: ``Gamma = (Z - Z0)/(Z + Z0)``) and the record continuation on a record made
of known damped sines."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.analysis.case import load_case
from ringprint.analysis.probe_s11 import ProbeS11, band_frequencies, port_impedance, reflection
from ringprint.analysis.report_s11 import dip_db
from ringprint.errors import RingprintError
from test_case import minimal, write_case


def test_port_impedance_key_default_custom_and_resolved(tmp_path):
    assert load_case(write_case(tmp_path, minimal())).output.port_impedance_ohm == 50.0
    case = load_case(write_case(tmp_path, minimal("[output]\nport_impedance = 75\n")))
    assert case.output.port_impedance_ohm == 75.0
    again = tmp_path / "again.toml"
    again.write_text(case.resolved_toml())
    assert load_case(again).output.port_impedance_ohm == 75.0


def test_reflection_of_known_loads():
    """Matched load 0, open +1, short -1, 25 ohm on 50 ohm -1/3 (Pozar sec. 4.3)."""
    np.testing.assert_allclose(reflection([50, 1e18, 0, 25], 50.0), [0, 1, -1, -1 / 3], atol=1e-15)
    with pytest.raises(RingprintError, match="must be > 0"):
        reflection([1.0], 0.0)


def test_dip_is_the_lowest_point_within_the_half_power_width():
    f = np.linspace(1e9, 2e9, 1001)
    s = 1 - 0.5 / (1 + 2j * 100 * (f - 1.5e9) / 1.5e9)                # dip to 0.5 at 1.5 GHz
    t = ProbeS11(f, s, 50.0, "test", np.zeros_like(s), 0.0)
    assert dip_db(t, 1.501e9, 100.0) == pytest.approx(20 * np.log10(0.5), abs=1e-9)
    assert dip_db(t, 1.2e9, 1e6) == pytest.approx(float(t.db_at(1.2e9)))   # nothing inside: the point


def test_band_points_resolve_the_sharpest_mode():
    class P:
        frequency_hz, q = 2e9, 500.0
    f = band_frequencies(1e9, 3e9, [P()])
    assert np.diff(f)[0] <= 2e9 / 500 / 8 * 1.0001
    P.q = 5e6
    assert band_frequencies(1e9, 3e9, [P()]).size == 20001               # the cap
    assert band_frequencies(1e9, 3e9, []).size == 1001


def test_record_of_known_damped_sines_gives_its_closed_form_impedance():
    """EMF = -d/dt of a known flux (an ideal inductor L = 2 nH in series with one
    resonance) sampled as the solver would; the continuation of a record cut while the
    resonance still rings brings Z back to the closed form of the full sum to 1e-6."""
    from ringprint.fdtd import GaussianPulse

    dt, f_r, q = 1e-12, 2.0e9, 40.0
    pulse = GaussianPulse(1.5e9, 2.5e9)
    start = int(np.ceil(pulse.t_end / dt))
    gamma = np.pi * f_r / q                              # 1/gamma = 6400 steps
    n = start + 120000                                   # 19 e-foldings: complete to 1e-8
    t = (np.arange(n) + 1) * dt
    emf = 0.3 * np.exp(-gamma * t) * np.cos(2 * np.pi * f_r * t + 0.4) * (np.arange(n) >= start)

    class Pole:
        frequency_hz, decay_rate = f_r, gamma
    f = np.linspace(1.6e9, 2.4e9, 801)
    z_full, _ = port_impedance(emf, dt, pulse, f, (), 0)
    cut = start + 9600                                   # 1.5 e-foldings
    z_cut, share = port_impedance(emf[:cut], dt, pulse, f, [Pole()], start)
    z_bare, _ = port_impedance(emf[:cut], dt, pulse, f, (), 0)
    scale = np.max(np.abs(z_full))
    assert np.max(np.abs(z_cut - z_full)) < 1e-6 * scale
    assert np.max(np.abs(z_bare - z_full)) > 1e-2 * scale and share > 0.1
