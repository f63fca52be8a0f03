"""Constants against outside references: CODATA (scipy.constants), IUPAC 2001 and the biomolecular
DSS/NH3 frequency ratios, and textbook relations between them."""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants as sc

from backbone import constants as c
from backbone.errors import BackboneError


def test_proton_gamma_matches_codata():
    # CODATA 2018 through scipy.constants: the free-proton gyromagnetic ratio 2.6752218744e8 s^-1 T^-1.
    # Harris et al. 2001 list 26.7522128e7 (CODATA 1998); the two CODATA editions differ by 2.2e-7.
    codata = sc.physical_constants["proton gyromag. ratio"][0]
    assert_allclose(c.GAMMA["1H"].value, codata, rtol=5e-7)


def test_deuteron_gamma_from_codata_magnetic_moment():
    # gamma = mu / (I hbar) with I = 1 for the deuteron (CODATA 2018 through scipy.constants).
    mu_d = sc.physical_constants["deuteron mag. mom."][0]
    assert_allclose(c.GAMMA["2H"].value, mu_d / (1.0 * sc.hbar), rtol=1e-6)


# Harris, Becker, Cabral de Menezes, Goodfellow & Granger, Pure Appl. Chem. 73, 1795 (2001), Table 1, Xi in %.
IUPAC_XI_PERCENT = {"1H": 100.000000, "2H": 15.350609, "13C": 25.145020, "15N": 10.136767}
# Markley et al., Pure Appl. Chem. 70, 117 (1998), Table 2: DSS (1H, 2H, 13C) and liquid NH3 (15N).
DSS_XI = {"1H": 1.0, "2H": 0.153506088, "13C": 0.251449530, "15N": 0.101329118}


@pytest.mark.parametrize("isotope", sorted(IUPAC_XI_PERCENT))
def test_xi_iupac(isotope):
    assert_allclose(c.XI_IUPAC[isotope].value, IUPAC_XI_PERCENT[isotope] / 100.0, rtol=1e-9)


@pytest.mark.parametrize("isotope", sorted(DSS_XI))
def test_xi_dss(isotope):
    assert_allclose(c.XI_DSS[isotope].value, DSS_XI[isotope], rtol=1e-10)


@pytest.mark.parametrize("isotope", ["2H", "13C", "15N"])
def test_xi_close_to_gamma_ratio(isotope):
    # Xi = nu_X / nu_H of the references equals |gamma_X / gamma_H| up to the shielding difference of
    # the two reference compounds, under 1000 ppm for these nuclei (Harris et al. 2001, section 3).
    ratio = abs(c.GAMMA[isotope].value / c.GAMMA["1H"].value)
    assert_allclose(c.XI_IUPAC[isotope].value, ratio, rtol=1e-3)
    assert_allclose(c.XI_DSS[isotope].value, ratio, rtol=1e-3)


def test_nitromethane_on_the_ammonia_scale():
    # Nitromethane resonates about 380.5 ppm downfield of liquid ammonia (the offset between the IUPAC and
    # biomolecular 15N scales; Markley et al. 1998 discussion, from memory).
    ppm = (c.XI_IUPAC["15N"].value / c.XI_DSS["15N"].value - 1.0) * 1e6
    assert_allclose(ppm, 380.5, atol=0.5)


def test_larmor_from_mhz_and_from_tesla_agree():
    # nu = gamma B0 / 2 pi with CODATA gamma_p; common practice: "a 600 MHz magnet is 14.1 T".
    b0 = c.b0_from_proton_mhz(600.0)
    assert_allclose(b0, 2 * np.pi * 600e6 / sc.physical_constants["proton gyromag. ratio"][0], rtol=5e-7)
    assert_allclose(b0, 14.1, rtol=1e-3)
    for iso in c.ISOTOPES:
        assert_allclose(c.larmor(iso, proton_mhz=600.0), c.larmor(iso, b0_t=b0), rtol=1e-12)
    assert_allclose(c.proton_mhz_from_b0(b0), 600.0, rtol=1e-12)


def test_larmor_signs_and_magnitudes():
    # On a 600 MHz magnet 15N resonates near 60.8 MHz, 13C near 150.9 MHz, 2H near 92.1 MHz: Xi x 600 MHz
    # (Markley et al. 1998); the bare-nucleus Larmor frequency differs from it only by shielding (< 1e-3).
    # 15N has a negative gyromagnetic ratio (Harris et al. 2001).
    assert c.larmor_hz("15N", proton_mhz=600.0) < 0
    for iso in ("2H", "13C", "15N"):
        assert_allclose(abs(c.larmor_hz(iso, proton_mhz=600.0)), DSS_XI[iso] * 600e6, rtol=1e-3)


def test_larmor_vectorized():
    fields = np.array([500.0, 600.0, 800.0, 1200.0])
    out = c.larmor("1H", proton_mhz=fields)
    assert out.shape == (4,)
    assert_allclose(out, 2 * np.pi * fields * 1e6, rtol=1e-12)


def test_field_errors():
    with pytest.raises(BackboneError, match="exactly one"):
        c.field_to_b0()
    with pytest.raises(BackboneError, match="exactly one"):
        c.field_to_b0(proton_mhz=600.0, b0_t=14.1)
    with pytest.raises(BackboneError, match="isotope 'Xe'"):
        c.larmor("Xe", proton_mhz=600.0)


def test_effective_csa_axial_equals_delta():
    # For an axial tensor (s11 = s22 = s_perp, s33 = s_par) Delta_sigma_eff = |s_par - s_perp|
    # (Kay, Torchia & Bax, Biochemistry 28, 8972, 1989).
    assert_allclose(c.effective_csa((-50.0, -50.0, 110.0)), 160.0, rtol=1e-12)


def test_carbonyl_csa_effective_anisotropy():
    # 13C' principal values 243, 178, 91 ppm (Teng, Iqbal & Cross 1992, from memory):
    # sqrt(sum s_i^2 - sum s_i s_j) written out.
    s = np.array([243.0, 178.0, 91.0])
    expect = np.sqrt((s**2).sum() - s[0] * s[1] - s[0] * s[2] - s[1] * s[2]) * 1e-6
    assert_allclose(c.CSA["C"].delta_eff, expect, rtol=1e-12)


def test_csa_tensor_needs_exactly_one_form():
    with pytest.raises(BackboneError, match="exactly one"):
        c.CSATensor("bad", "none")
    with pytest.raises(BackboneError, match="exactly one"):
        c.CSATensor("bad", "none", delta=1e-6, principal=(1e-6, 0.0, -1e-6))


def test_deuteron_dipolar_scaling():
    # A 2H partner (S = 1) instead of 1H scales a dipolar term by (gD/gH)^2 * [S(S+1)]_D/[S(S+1)]_H
    # = (gD/gH)^2 * 8/3, about 1/15.9 (Abragam, The Principles of Nuclear Magnetism, 1961, ch. VIII).
    d_h = c.dipolar_constant("15N", "1H", 1.02e-10) ** 2 * c.spin_factor("1H")
    d_d = c.dipolar_constant("15N", "2H", 1.02e-10) ** 2 * c.spin_factor("2H")
    assert_allclose(d_h / d_d, 15.9, rtol=5e-3)


def test_dipolar_constant_nh():
    # d/2pi for 15N-1H at 1.02 A is about -11.5 kHz (common practice, e.g. Kay, Torchia & Bax 1989 values).
    d = c.dipolar_constant("15N", "1H", 1.02e-10)
    assert d < 0
    expect = sc.mu_0 / (4 * np.pi) * sc.hbar * sc.physical_constants["proton gyromag. ratio"][0] * 2.71261804e7 / (1.02e-10) ** 3
    assert_allclose(abs(d), expect, rtol=1e-6)
    assert_allclose(abs(d) / (2 * np.pi), 11.5e3, rtol=0.01)


def test_constant_behaves_as_number():
    g = c.GAMMA["1H"]
    assert float(g) == g.value
    assert_allclose(2 * g, 2 * g.value)
    assert_allclose(g / 2, g.value / 2)
    assert g.unit and g.reference
