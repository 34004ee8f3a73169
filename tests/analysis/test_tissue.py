"""Body-tissue permittivity (ringprint.analysis.tissue).

Reference values: the permittivity and conductivity that the four-term Cole-Cole
parameters of Gabriel, Lau & Gabriel (Phys. Med. Biol. 41:2271-2293, 1996) give at
900 MHz, 1.8 GHz and 2.45 GHz, as widely quoted in tissue-property tables and SAR
work. Both these values and the parameters in data/tissue.toml are FROM MEMORY, so the
check allows 3 % on eps' and 5 % on sigma: a wrong parameter (a digit slipped, a
swapped term) moves them by far more, while rounding in the quoted tables stays inside.
"""

import numpy as np
import pytest

from ringprint.analysis.tissue import (TISSUES, cole_cole_permittivity, describe,
                                       tissue_permittivity, tissue_properties)
from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0

# (tissue, frequency Hz, eps', sigma S/m) -- widely quoted values, from memory.
QUOTED = [
    ("muscle", 900e6, 55.0, 0.94), ("muscle", 1.8e9, 53.5, 1.34), ("muscle", 2.45e9, 52.7, 1.74),
    ("skin-dry", 900e6, 41.4, 0.87), ("skin-dry", 1.8e9, 38.9, 1.18), ("skin-dry", 2.45e9, 38.0, 1.46),
    ("skin-wet", 900e6, 46.1, 0.85), ("skin-wet", 2.45e9, 42.9, 1.59),
    ("fat", 900e6, 5.46, 0.051), ("fat", 2.45e9, 5.28, 0.105),
    ("blood", 900e6, 61.4, 1.54), ("blood", 2.45e9, 58.3, 2.54),
]


@pytest.mark.parametrize("name, f, eps_ref, sigma_ref", QUOTED)
def test_quoted_values(name, f, eps_ref, sigma_ref):
    """Gabriel et al. 1996 model vs the widely quoted table values (from memory; 3 % / 5 %)."""
    eps, sigma = tissue_properties(name, f)
    assert eps == pytest.approx(eps_ref, rel=0.03)
    assert sigma == pytest.approx(sigma_ref, rel=0.05)


@pytest.mark.parametrize("name", TISSUES)
def test_sign_convention_and_consistency(name):
    """exp(-i w t): Im eps = sigma_eff / (w eps0) > 0; tissue_properties agrees with it."""
    f = 1.5e9
    eps = tissue_permittivity(name, f)
    props = tissue_properties(name, f)
    assert isinstance(eps, complex) and eps.imag > 0
    assert props.eps_real == pytest.approx(eps.real, rel=1e-12)
    assert props.sigma_s_per_m == pytest.approx(2 * np.pi * f * EPS0 * eps.imag, rel=1e-12)


@pytest.mark.parametrize("name", TISSUES)
def test_dispersion_is_monotone(name):
    """Kramers-Kronig-type sanity for a passive relaxing medium (Debye/Cole-Cole, e.g.
    Gabriel et al. 1996 Fig. 1-3): eps' never rises and sigma_eff never falls with
    frequency, over the fitted range 10 Hz - 20 GHz."""
    f = np.logspace(1, np.log10(20e9), 400)
    eps, sigma = tissue_properties(name, f)
    assert np.all(np.diff(eps) <= 1e-9 * eps[:-1])
    assert np.all(np.diff(sigma) >= -1e-9 * sigma[1:])
    assert eps[0] > 5 * eps[-1]            # strong low-frequency dispersion in every tissue


def test_cole_cole_limits():
    """Closed-form limits of the Cole-Cole sum (Cole & Cole 1941): eps -> eps_inf + sum(d_eps)
    at w -> 0 and -> eps_inf at w -> inf without ionic conduction; a single alpha = 0 term
    is the Debye form d / (1 - i w tau) in the exp(-i w t) convention."""
    d, tau = (30.0, 100.0), (1e-11, 1e-6)
    low = cole_cole_permittivity(1e-3, 4.0, d, tau, (0.1, 0.2), 0.0)
    high = cole_cole_permittivity(1e15, 4.0, d, tau, (0.1, 0.2), 0.0)
    assert low.real == pytest.approx(134.0, rel=2e-3) and high.real == pytest.approx(4.0, rel=2e-3)
    w = 2 * np.pi * 3e9
    debye = cole_cole_permittivity(3e9, 2.0, (10.0,), (5e-11,), (0.0,), 0.0)
    assert debye == pytest.approx(2.0 + 10.0 / (1 - 1j * w * 5e-11), rel=1e-12)
    ionic = cole_cole_permittivity(3e9, 2.0, (), (), (), 0.5)
    assert ionic.imag == pytest.approx(0.5 / (w * EPS0), rel=1e-12)


def test_arrays_and_description():
    eps = tissue_permittivity("fat", [1e9, 2e9])
    assert eps.shape == (2,) and eps.dtype == complex
    assert "fat" in describe("fat")


def test_bad_name_lists_valid_names():
    with pytest.raises(RingprintError) as err:
        tissue_permittivity("skinn_dry", 1e9)
    msg = str(err.value)
    assert "\n" not in msg and "skinn_dry" in msg and all(t in msg for t in TISSUES)


@pytest.mark.parametrize("f", [1.0, 1e12, float("nan"), "abc", -5.0])
def test_bad_frequency(f):
    with pytest.raises(RingprintError, match="frequency"):
        tissue_permittivity("muscle", f)


def test_bad_cole_cole_terms():
    with pytest.raises(RingprintError):
        cole_cole_permittivity(1e9, 4.0, (1.0,), (1e-9,), (1.2,), 0.0)
    with pytest.raises(RingprintError):
        cole_cole_permittivity(1e9, 4.0, (1.0, 2.0), (1e-9,), (0.1,), 0.0)


def test_old_tissue_names_still_work():
    """Tissue names take the hyphen style of the material library (issue 13); the old
    underscore names are aliases of the same entries."""
    assert "skin-dry" in TISSUES and "skin_dry" not in TISSUES
    assert tissue_permittivity("skin_dry", 1e9) == tissue_permittivity("skin-dry", 1e9)
    assert describe("skin_wet") == describe("skin-wet")

