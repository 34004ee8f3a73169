"""Tests of the material library and the loss conversion (ringprint.analysis.materials)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, strategies as st
from scipy.constants import epsilon_0

from ringprint.analysis.materials import (Material, conversion_frequency, dielectric_q,
                                          get_material, library, loss_tangent_to_sigma,
                                          sigma_to_loss_tangent, skin_depth)
from ringprint.errors import RingprintError

REQUIRED = ["pec", "copper", "aluminium", "stainless-steel", "air", "fr4", "ptfe-ceramic-laminate",
            "abs", "pc", "pc-abs", "pa66", "lcp", "ptfe", "alumina", "soda-lime-glass",
            "aluminosilicate-glass", "polyimide", "water", "battery-pouch", "nickel-plated-steel",
            "tin"]


def test_library_has_the_common_materials():
    lib = library()
    for name in REQUIRED:
        assert name in lib, name


def test_every_entry_states_its_source_and_frequency():
    for name, m in library().items():
        assert m.source, f"{name} has no source"
        if not m.is_conductor:
            assert m.frequency_hz and m.frequency_hz > 0, f"{name}: no frequency for its values"
            assert m.loss_tangent is not None and m.eps_r >= 1.0
    # values recalled from memory say so
    assert "from memory" in get_material("fr4").source


def test_conductors_are_perfect_in_the_solver_and_lossy_by_surface_resistance():
    """Every conductor is a perfect conductor for the solver; the finite metals carry
    their sigma for the surface-resistance loss, pec none."""
    for name in ("pec", "copper", "aluminium", "stainless-steel", "battery-pouch",
                 "nickel-plated-steel", "tin"):
        m = get_material(name)
        assert m.is_conductor and m.is_pec
        assert m.conductivity(1e9) == math.inf
        assert m.is_lossy_conductor == (name != "pec")
        assert (m.surface_resistance(1e9) > 0) == (name != "pec")
    assert get_material("pec").sigma is None
    assert not get_material("fr4").is_lossy_conductor


def test_metal_conductivities_from_their_resistivities():
    """Bulk resistivities at 20 C (CRC Handbook of Chemistry and Physics class, from
    memory): aluminium 2.65e-8, nickel 6.99e-8, tin 1.09e-7 ohm m; 304 stainless steel
    7.2e-7 ohm m (data-sheet class). The nickel plating is taken non-magnetic (mu_r 1),
    the least loss it can have."""
    for name, rho in (("aluminium", 2.65e-8), ("nickel-plated-steel", 6.99e-8),
                      ("tin", 1.09e-7), ("stainless-steel", 7.2e-7)):
        assert get_material(name).sigma == pytest.approx(1 / rho, rel=5e-3), name
    nickel = get_material("nickel-plated-steel")
    assert nickel.mu_r == 1.0 and "from memory" in nickel.source
    # the RF current stays in a typical plating (3-10 um): the skin depth at 1 GHz is ~4 um
    assert 3e-6 < skin_depth(1e9, nickel.sigma, nickel.mu_r) < 5e-6


def test_conductor_sigma_and_mu_r_are_checked():
    with pytest.raises(RingprintError, match=r"sigma must be > 0 S/m.*\"pec\"\) for the lossless"):
        Material("foil", is_conductor=True, sigma=0.0)
    with pytest.raises(RingprintError, match="mu_r must be a finite number >= 1"):
        Material("foil", is_conductor=True, sigma=1e7, mu_r=0.5)
    with pytest.raises(RingprintError, match="mu_r is for conductors only"):
        Material("ferrite", eps_r=10.0, mu_r=5.0)
    magnetic = Material("plating", is_conductor=True, sigma=1.43e7, mu_r=4.0)
    plain = Material("plating", is_conductor=True, sigma=1.43e7)
    assert magnetic.surface_resistance(2e9) == pytest.approx(2 * plain.surface_resistance(2e9), rel=1e-14)


def test_copper_is_the_annealed_copper_standard():
    """IACS: 100 % conductivity is a resistivity of 1/58 ohm mm^2/m = 1.7241e-8 ohm m."""
    assert get_material("copper").sigma == pytest.approx(1 / 1.7241e-8, rel=1e-3)


def test_lookup_aliases_case_and_suggestions():
    assert get_material("Aluminum") is get_material("aluminium")
    assert get_material(" FR-4 ") is get_material("fr4")
    with pytest.raises(RingprintError, match=r"unknown material 'alumnium'; did you mean .*'aluminium'"):
        get_material("alumnium")


def test_q_d_is_inverse_loss_tangent_at_the_conversion_frequency():
    """A filled cavity of loss tangent tan_d has Q_d = 1/tan_d (Pozar 2012, sec. 6.7);
    with a frequency-independent sigma that holds at the conversion frequency only."""
    f_min, f_max = 0.6e9, 6e9
    fc = conversion_frequency(f_min, f_max)
    assert fc == pytest.approx(math.sqrt(f_min * f_max), rel=1e-15)
    for name in ("fr4", "abs", "alumina", "water", "ptfe"):
        m = get_material(name)
        sigma = m.conductivity(fc)
        assert dielectric_q(sigma, m.eps_r, fc) == pytest.approx(1 / m.loss_tangent, rel=1e-12)
        # away from fc, Q_d = omega eps / sigma scales with f: the same factor at both ends
        q_lo = dielectric_q(sigma, m.eps_r, f_min) * m.loss_tangent
        q_hi = dielectric_q(sigma, m.eps_r, f_max) * m.loss_tangent
        assert q_lo == pytest.approx(f_min / fc, rel=1e-12)
        assert q_hi == pytest.approx(f_max / fc, rel=1e-12)
        assert q_lo * q_hi == pytest.approx(1.0, rel=1e-12)


@given(st.floats(1.0, 100.0), st.floats(1e-5, 0.5), st.floats(1e6, 1e11))
def test_conversion_matches_complex_permittivity(eps_r, tan_d, f):
    """eps_c = eps0 eps_r - j sigma / omega has -Im/Re = tan_d (Pozar 2012, eq. 1.58)."""
    sigma = float(loss_tangent_to_sigma(tan_d, eps_r, f))
    eps_c = epsilon_0 * eps_r - 1j * sigma / (2 * np.pi * f)
    assert -eps_c.imag / eps_c.real == pytest.approx(tan_d, rel=1e-12)
    assert float(sigma_to_loss_tangent(sigma, eps_r, f)) == pytest.approx(tan_d, rel=1e-12)


def test_conversion_is_vectorized():
    sig = loss_tangent_to_sigma(np.array([0.01, 0.02]), np.array([3.0, 4.0]), 1e9)
    assert sig.shape == (2,) and sig[1] / sig[0] == pytest.approx(8 / 3)
    assert dielectric_q(0.0, 3.0, 1e9) == math.inf


def test_water_matches_the_debye_model():
    """Debye relaxation of water at 25 C, eps = eps_inf + (eps_s - eps_inf)/(1 + j w tau),
    with eps_s = 78.36, eps_inf = 5.2, tau = 8.27 ps (Kaatze 1989; parameters from memory)."""
    m = get_material("water")
    w = 2 * np.pi * m.frequency_hz
    eps = 5.2 + (78.36 - 5.2) / (1 + 1j * w * 8.27e-12)
    assert m.eps_r == pytest.approx(eps.real, rel=5e-3)
    assert m.loss_tangent == pytest.approx(-eps.imag / eps.real, rel=1e-2)


def test_material_given_with_sigma():
    m = Material("gel", eps_r=40.0, sigma=0.5)
    assert m.conductivity(1e9) == 0.5 and m.conductivity(5e9) == 0.5
    assert Material("lossless", eps_r=2.0).conductivity(1e9) == 0.0


@pytest.mark.parametrize("kwargs, match", [
    ({"eps_r": 0.5}, "eps_r must be a finite number >= 1"),
    ({"eps_r": float("nan")}, "eps_r must be a finite number >= 1"),
    ({"eps_r": 3.0, "loss_tangent": -0.1}, "loss_tangent must be finite and >= 0"),
    ({"eps_r": 3.0, "sigma": -1.0}, r"sigma \(S/m\) must be finite and >= 0"),
    ({"eps_r": 3.0, "loss_tangent": 0.01, "sigma": 1.0}, "either loss_tangent or sigma, not both"),
    ({"eps_r": 3.0, "is_conductor": True}, "a conductor takes no eps_r or loss_tangent"),
    ({"eps_r": 3.0, "frequency_hz": 0.0}, "must be > 0"),
])
def test_material_validation(kwargs, match):
    with pytest.raises(RingprintError, match=match):
        Material("m", **kwargs)


def test_conversion_inputs_are_checked():
    with pytest.raises(RingprintError, match="need 0 < f_min < f_max"):
        conversion_frequency(2e9, 1e9)
    with pytest.raises(RingprintError, match="frequency_hz must be finite and > 0"):
        loss_tangent_to_sigma(0.01, 3.0, 0.0)
    with pytest.raises(RingprintError, match="loss_tangent must be >= 0"):
        loss_tangent_to_sigma(-0.01, 3.0, 1e9)


def test_ceramic_laminates_carry_rounded_class_values():
    """Issue 13: the two ceramic-laminate entries carry rounded class values (eps_r to one
    decimal, loss tangent to one significant digit) and say so, rather than the data
    sheet of any one commercial grade."""
    for name in ("ptfe-ceramic-laminate", "hydrocarbon-ceramic-laminate"):
        m = get_material(name)
        assert round(m.eps_r, 1) == m.eps_r
        assert float(f"{m.loss_tangent:.0e}") == m.loss_tangent
        assert "class values" in m.source and "no one grade" in m.source

