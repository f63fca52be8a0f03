"""Coherence rates of the triple-resonance walks and the amide-1H recovery rate, recomputed inline.

Each isolated-geometry check writes the Redfield expressions out (Abragam 1961, ch. VIII; Solomon 1955; Kay,
Torchia & Bax, Biochemistry 28, 8972, 1989 for the heteronuclear pair and CSA terms; Goldman, J. Magn. Reson. 60,
437, 1984 for eta_xy) and the anti-phase rule R(2IxSz) = R2(I) without the S-flip term + the selective
longitudinal rate of S from its other partners (Peng & Wagner, J. Magn. Reson. 98, 308, 1992, from memory).
Partner weights are the site fractions read from the labeling scheme files.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants as sc

from backbone.constants import GAMMA
from backbone.errors import BackboneError
from backbone.labeling import load_scheme, registered_schemes
from backbone.relaxation import COHERENCES, NUCLEI, NUCLEUS_RATES, relaxation_rates
from backbone.relaxation.engine import ProtonBath
from backbone.relaxation.environment import DEFAULT_ENVIRONMENT, validate_environment

SCHEMES = sorted(registered_schemes())
PAIR_ONLY = {n: () for n in NUCLEI}
TAU_C, MHZ = 15e-9, 700.0
A = 1e-10

# Written-out inputs (sources beside each).
R_NC, R_NCA, R_CAC, R_CACB, R_CH = 1.329 * A, 1.458 * A, 1.525 * A, 1.530 * A, 1.09 * A  # Engh & Huber 1991
R_HH_GEMINAL = 2 * 1.09 * A * np.sin(np.arccos(-1 / 3) / 2)  # H-C-H at the tetrahedral angle, 1.78 A
DSIGMA_N, THETA_N = -160e-6, np.radians(17.0)  # Kay, Torchia & Bax 1989; Fushman et al. 1998 (from memory)
DSIGMA_H = 15e-6  # 1HN, Yao et al. 2010 (from memory)
DSIGMA_CA = DSIGMA_CB = 25e-6  # Tjandra & Bax 1997 (from memory); aliphatic CB the same
DSIGMA_HA = DSIGMA_HB = 5e-6  # small aliphatic 1H CSA (from memory)
S11, S22, S33 = 243e-6, 178e-6, 91e-6  # C' principal values, Teng, Iqbal & Cross 1992 (from memory)
DSIGMA_C = np.sqrt(S11**2 + S22**2 + S33**2 - S11 * S22 - S11 * S33 - S22 * S33)  # Delta sigma_eff


@pytest.fixture(scope="module")
def c13n15():
    return load_scheme("13c15n")


def _w(iso):
    b0 = 2 * np.pi * MHZ * 1e6 / GAMMA["1H"].value
    return GAMMA[iso].value * b0


def j(w):
    # Rigid rotor, J = (2/5) tc / (1 + w^2 tc^2) (Abragam 1961).
    return 0.4 * TAU_C / (1 + (np.asarray(w) * TAU_C) ** 2)


def d2(iso_i, iso_s, r):
    return (sc.mu_0 / (4 * np.pi) * sc.hbar * GAMMA[iso_i].value * GAMMA[iso_s].value / r**3) ** 2


def k_spin(iso):
    # (4/3) S(S+1) for a partner of spin S (Abragam 1961).
    return {"2H": 8 / 3}.get(iso, 1.0)


def het_r1(i, s, r):
    wi, ws = _w(i), _w(s)
    return k_spin(s) * d2(i, s, r) / 4 * (j(wi - ws) + 3 * j(wi) + 6 * j(wi + ws))


def het_r2(i, s, r):
    wi, ws = _w(i), _w(s)
    return k_spin(s) * d2(i, s, r) / 8 * (4 * j(0) + j(wi - ws) + 3 * j(wi) + 6 * j(ws) + 6 * j(wi + ws))


def het_r2_anti(i, s, r):
    wi, ws = _w(i), _w(s)
    return d2(i, s, r) / 8 * (4 * j(0) + j(wi - ws) + 3 * j(wi) + 6 * j(wi + ws))


def like_rho(iso, r):
    w = _w(iso)
    return d2(iso, iso, r) / 4 * (j(0) + 3 * j(w) + 6 * j(2 * w))


def like_r2(iso, r):
    w = _w(iso)
    return d2(iso, iso, r) / 8 * (5 * j(0) + 9 * j(w) + 6 * j(2 * w))


def like_r2_anti(iso, r):
    w = _w(iso)
    return d2(iso, iso, r) / 8 * (5 * j(0) + 3 * j(w) + 6 * j(2 * w))


def csa_r1(iso, dsigma):
    return (_w(iso) * dsigma) ** 2 / 3 * j(_w(iso))


def csa_r2(iso, dsigma):
    w = _w(iso)
    return (w * dsigma) ** 2 / 3 / 6 * (4 * j(0) + 3 * j(w))


def _rates(scheme, env, **kw):
    return relaxation_rates(TAU_C, proton_mhz=MHZ, labeling=scheme, environment=env, **kw)


# --------------------------------------------------------------------------------------------------------
# 15N anti-phase to a carbon, decoupled and TROSY
# --------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("carbon,r_nx,other,r_other", [("C", R_NC, "CA", R_CAC), ("CA", R_NCA, "C", R_CAC)])
def test_nitrogen_antiphase_to_carbon(c13n15, carbon, r_nx, other, r_other):
    # N(i)-H pair plus one bonded carbon X, which has one further 13C partner (like spins).
    env = dict(PAIR_ONLY, N=[(carbon, r_nx)], **{carbon: [("N", r_nx), (other, r_other)]})
    rates = _rates(c13n15, env).coherences
    f_x, f_n, f_o = (c13n15.fraction(s) for s in (carbon, "N", other))
    r_nh = 1.02e-10  # Kay, Torchia & Bax 1989
    n_x = het_r2("15N", "1H", r_nh) + csa_r2("15N", DSIGMA_N) + f_x * het_r2("15N", "13C", r_nx)
    # 2NxHz: N-H term without the H flip 6J(wH), plus rho(H) = its CSA (no other partners here).
    n_anti_h = n_x - d2("15N", "1H", r_nh) / 8 * 6 * j(_w("1H")) + csa_r1("1H", DSIGMA_H)
    n_hdec = 0.5 * (n_x + n_anti_h)  # Cavanagh et al. 2007 (from memory)
    csa_x = DSIGMA_C if carbon == "C" else DSIGMA_CA
    rho_x_other = f_o * like_rho("13C", r_other) + csa_r1("13C", csa_x)  # X's R1 without its N partner
    to_x = -f_x * het_r2("15N", "13C", r_nx) + het_r2_anti("15N", "13C", r_nx) + rho_x_other
    name = "2NxCz" if carbon == "C" else "2NxCAz"
    assert_allclose(rates[name], n_hdec + to_x, rtol=1e-10)
    # TROSY component: the decoupled mean minus |eta_xy| (Goldman 1984; Pervushin et al. 1997).
    d_nh = np.sqrt(d2("15N", "1H", r_nh))
    c_n = _w("15N") * DSIGMA_N / np.sqrt(3)
    eta = abs(d_nh * c_n * (3 * np.cos(THETA_N) ** 2 - 1) / 2 / (2 * np.sqrt(3)) * (4 * j(0) + 3 * j(_w("15N"))))
    assert_allclose(rates[name + "_trosy"], n_hdec - eta + to_x, rtol=1e-10)


# --------------------------------------------------------------------------------------------------------
# CA-HA
# --------------------------------------------------------------------------------------------------------


def test_alpha_group_coherences(c13n15):
    env = dict(PAIR_ONLY, CA=[("HA", R_CH), ("C", R_CAC)], HA=[("CA", R_CH), ("H", 2.8 * A)])
    rates = _rates(c13n15, env).coherences
    f_ha, f_ca, f_c, f_h = (c13n15.fraction(s) for s in ("HA", "CA", "C", "H"))
    # HA partners: CA (13C) and HN (1H, like spin). CA partners: HA as 1H (f_ha) and 2H (1 - f_ha), C'.
    ha_x = f_ca * het_r2("1H", "13C", R_CH) + f_h * like_r2("1H", 2.8 * A) + csa_r2("1H", DSIGMA_HA)
    ca_x = (
        f_ha * het_r2("13C", "1H", R_CH)
        + (1 - f_ha) * het_r2("13C", "2H", R_CH)
        + f_c * like_r2("13C", R_CAC)
        + csa_r2("13C", DSIGMA_CA)
    )
    rho_ha_other = f_h * like_rho("1H", 2.8 * A) + csa_r1("1H", DSIGMA_HA)
    r1_ca_other = (1 - f_ha) * het_r1("13C", "2H", R_CH) + f_c * like_rho("13C", R_CAC) + csa_r1("13C", DSIGMA_CA)
    ca_anti_ha = ca_x - f_ha * het_r2("13C", "1H", R_CH) + het_r2_anti("13C", "1H", R_CH) + rho_ha_other
    ha_anti_ca = ha_x - f_ca * het_r2("1H", "13C", R_CH) + het_r2_anti("1H", "13C", R_CH) + r1_ca_other
    assert_allclose(rates["HAx"], ha_x, rtol=1e-10)
    assert_allclose(rates["2CAxHAz"], ca_anti_ha, rtol=1e-10)
    assert_allclose(rates["2HAxCAz"], ha_anti_ca, rtol=1e-10)
    # 1H decoupling: mean of in-phase and anti-phase (Cavanagh et al. 2007, from memory).
    assert_allclose(rates["CAx_hdec"], 0.5 * (ca_x + ca_anti_ha), rtol=1e-10)


def test_alpha_carbon_decoupled_in_deuterated_sample_is_in_phase_rate():
    # HA is 2H: the deuteron partner gives the rate directly (2H decoupling removes the scalar coupling).
    scheme = load_scheme("2h13c15n")
    env = dict(PAIR_ONLY, CA=[("HA", R_CH)])
    rates = _rates(scheme, env)
    f_ha = scheme.fraction("HA")
    expected = f_ha * het_r2("13C", "1H", R_CH) + (1 - f_ha) * het_r2("13C", "2H", R_CH) + csa_r2("13C", DSIGMA_CA)
    assert "HA" not in rates.nuclei and "2CAxHAz" not in rates.coherences
    assert_allclose(rates.coherences["CAx_hdec"], expected, rtol=1e-10)
    assert_allclose(rates.coherences["CAx_hdec"], rates.coherences["CAx"], rtol=0)


# --------------------------------------------------------------------------------------------------------
# CB-HB (CH2) and carbon-carbon anti-phase
# --------------------------------------------------------------------------------------------------------


def _beta_env():
    return dict(
        PAIR_ONLY,
        CA=[("CB", R_CACB)],
        CB=[("HB", R_CH, 2.0), ("CA", R_CACB)],
        HB=[("CB", R_CH), ("HB", R_HH_GEMINAL)],
    )


def test_beta_group_coherences(c13n15):
    rates = _rates(c13n15, _beta_env()).coherences
    f_hb, f_cb, f_ca = (c13n15.fraction(s) for s in ("HB", "CB", "CA"))
    hb_x = (
        f_cb * het_r2("1H", "13C", R_CH)
        + f_hb * like_r2("1H", R_HH_GEMINAL)
        + (1 - f_hb) * het_r2("1H", "2H", R_HH_GEMINAL)
        + csa_r2("1H", DSIGMA_HB)
    )
    cb_x = (
        2 * (f_hb * het_r2("13C", "1H", R_CH) + (1 - f_hb) * het_r2("13C", "2H", R_CH))
        + f_ca * like_r2("13C", R_CACB)
        + csa_r2("13C", DSIGMA_CB)
    )
    # CB anti-phase to ONE of its two protons: that pair loses its HB flip; the other HB stays in-phase.
    rho_hb_other = f_hb * like_rho("1H", R_HH_GEMINAL) + (1 - f_hb) * het_r1("1H", "2H", R_HH_GEMINAL)
    rho_hb_other += csa_r1("1H", DSIGMA_HB)
    cb_anti_hb = cb_x - f_hb * het_r2("13C", "1H", R_CH) + het_r2_anti("13C", "1H", R_CH) + rho_hb_other
    r1_cb_other = (
        f_hb * het_r1("13C", "1H", R_CH)  # the second HB
        + 2 * (1 - f_hb) * het_r1("13C", "2H", R_CH)
        + f_ca * like_rho("13C", R_CACB)
        + csa_r1("13C", DSIGMA_CB)
    )
    hb_anti_cb = hb_x - f_cb * het_r2("1H", "13C", R_CH) + het_r2_anti("1H", "13C", R_CH) + r1_cb_other
    assert_allclose(rates["HBx"], hb_x, rtol=1e-10)
    assert_allclose(rates["2CBxHBz"], cb_anti_hb, rtol=1e-10)
    assert_allclose(rates["2HBxCBz"], hb_anti_cb, rtol=1e-10)
    # Decoupled CH2: each of the two protons half in-phase, half anti-phase, so CBx + 2 * (1/2)(anti - in).
    assert_allclose(rates["CBx_hdec"], cb_x + (cb_anti_hb - cb_x), rtol=1e-10)
    # Like-spin 13C-13C anti-phase (Abragam 1961 like-spin terms; Peng & Wagner 1992 rule).
    ca_x = f_cb * like_r2("13C", R_CACB) + csa_r2("13C", DSIGMA_CA)
    r1_cb_not_ca = (  # CB's R1 from both HB and its CSA, without CA
        2 * f_hb * het_r1("13C", "1H", R_CH) + 2 * (1 - f_hb) * het_r1("13C", "2H", R_CH) + csa_r1("13C", DSIGMA_CB)
    )
    ca_anti_cb = ca_x - f_cb * like_r2("13C", R_CACB) + like_r2_anti("13C", R_CACB) + r1_cb_not_ca
    assert_allclose(rates["2CAxCBz"], ca_anti_cb, rtol=1e-10)
    rho_ca_other = csa_r1("13C", DSIGMA_CA)  # CA has only CB here
    cb_anti_ca = cb_x - f_ca * like_r2("13C", R_CACB) + like_r2_anti("13C", R_CACB) + rho_ca_other
    assert_allclose(rates["2CBxCAz"], cb_anti_ca, rtol=1e-10)


def test_carbonyl_antiphase_to_alpha_carbon(c13n15):
    env = dict(PAIR_ONLY, C=[("CA", R_CAC), ("N", R_NC)], CA=[("C", R_CAC), ("N", R_NCA)])
    rates = _rates(c13n15, env).coherences
    f_ca, f_n = c13n15.fraction("CA"), c13n15.fraction("N")
    c_x = f_ca * like_r2("13C", R_CAC) + f_n * het_r2("13C", "15N", R_NC) + csa_r2("13C", DSIGMA_C)
    r1_ca_other = f_n * het_r1("13C", "15N", R_NCA) + csa_r1("13C", DSIGMA_CA)
    expected = c_x - f_ca * like_r2("13C", R_CAC) + like_r2_anti("13C", R_CAC) + r1_ca_other
    assert_allclose(rates["2CxCAz"], expected, rtol=1e-10)


# --------------------------------------------------------------------------------------------------------
# Ordering facts with the default geometry
# --------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("tau_c", [20e-9, 50e-9])
def test_carbon_antiphase_to_its_proton_is_faster_at_large_tau_c(tau_c):
    # 2CAxHAz carries rho(HA), J(0)-dominated by 1H-1H spin diffusion at large tau_c (Solomon 1955; common
    # practice), which outweighs the HA flip term the in-phase CAx has.
    rates = relaxation_rates(tau_c, proton_mhz=800.0, labeling=load_scheme("13c15n")).coherences
    assert rates["2CAxHAz"] > rates["CAx"]
    assert rates["2CBxHBz"] > rates["CBx"]
    assert rates["CAx"] < rates["CAx_hdec"] < rates["2CAxHAz"]


@pytest.mark.parametrize("mhz", [600.0, 800.0])
def test_deuteration_reduces_alpha_carbon_r2_several_fold(mhz):
    # Perdeuteration removes the directly bonded 1H, the dominant 13CA relaxation source; 13CA R2 drops by
    # roughly an order of magnitude (common practice, from memory). The engine gives about 7x at 20 ns
    # (7.6x at 600 MHz; 7.2x at 800 MHz, 94.8 vs 13.1 s^-1); the assertion is the conservative bound > 4.
    rates = {s: relaxation_rates(20e-9, proton_mhz=mhz, labeling=load_scheme(s)) for s in ("13c15n", "2h13c15n")}
    ratio = rates["13c15n"].coherences["CAx"] / rates["2h13c15n"].coherences["CAx"]
    assert 4 < ratio < 15
    assert rates["13c15n"].coherences["CAx_hdec"] > 4 * rates["2h13c15n"].coherences["CAx_hdec"]


@pytest.mark.parametrize("scheme_id", SCHEMES)
def test_trosy_variants_slower_than_decoupled(scheme_id):
    # At 800 MHz and 20 ns the TROSY component relaxes slower than the 1H-decoupled 15N (Pervushin, Riek,
    # Wider & Wuthrich, PNAS 94, 12366, 1997); the carbon anti-phase part is the same in both.
    rates = relaxation_rates(20e-9, proton_mhz=800.0, labeling=load_scheme(scheme_id)).coherences
    for name in ("2NxCz", "2NxCAz"):
        if name in rates:
            assert rates[name + "_trosy"] < rates[name], name
            assert_allclose(rates[name] - rates[name + "_trosy"], rates["Nx_hdec"] - rates["N_trosy"], rtol=1e-9)


# --------------------------------------------------------------------------------------------------------
# Presence under each labeling scheme
# --------------------------------------------------------------------------------------------------------

# Sites each new coherence needs in its magnetic isotope (written independently of the engine's table).
_NEEDS = {
    "2NxCz": ("N", "C", "H"),
    "2NxCAz": ("N", "CA", "H"),
    "2NxCz_trosy": ("N", "C", "H"),
    "2NxCAz_trosy": ("N", "CA", "H"),
    "HAx": ("HA",),
    "2HAxCAz": ("HA", "CA"),
    "2CAxHAz": ("CA", "HA"),
    "HBx": ("HB",),
    "2HBxCBz": ("HB", "CB"),
    "2CBxHBz": ("CB", "HB"),
    "2CAxCBz": ("CA", "CB"),
    "2CBxCAz": ("CB", "CA"),
    "2CxCAz": ("C", "CA"),
    "CAx_hdec": ("CA",),
    "CBx_hdec": ("CB",),
}
_MAGNETIC = {"H": "1H", "HA": "1H", "HB": "1H", "N": "15N", "CA": "13C", "C": "13C", "CB": "13C"}


@pytest.mark.parametrize("scheme_id", SCHEMES)
def test_presence_follows_labeling(scheme_id):
    scheme = load_scheme(scheme_id)
    rates = relaxation_rates(10e-9, proton_mhz=600.0, labeling=scheme)
    assert set(_NEEDS) <= set(COHERENCES)
    for name, sites in _NEEDS.items():
        expected = all(scheme.isotope(s) == _MAGNETIC[s] for s in sites)
        # A carbon-bound proton kept only as a minority under fractional deuteration still gives the coherences
        # in which it is the transverse spin: they describe the 1H-bearing molecules (RateSet.minority).
        first = sites[0]
        if first in ("HA", "HB") and scheme.fraction(first) > 0 and all(
            scheme.isotope(s) == _MAGNETIC[s] for s in sites[1:]
        ):
            expected = True
        assert (name in rates.coherences) == expected, name
        if expected:
            assert np.isfinite(rates.coherence(name)) and rates.coherence(name) > 0
        else:
            with pytest.raises(BackboneError, match="needs"):
                rates.coherence(name)
    # The beta proton is reported among the side-chain nuclei, never among the backbone nuclei.
    assert "HB" not in rates.nuclei
    assert ("HB" in rates.side_chain) == (scheme.isotope("HB") == "1H")


def test_missing_beta_proton_named_in_error():
    rates = relaxation_rates(10e-9, proton_mhz=600.0, labeling=load_scheme("2h13c15n"))
    with pytest.raises(BackboneError, match="needs HB"):
        rates.coherence("2CBxHBz")


def test_rex_of_beta_proton():
    base = relaxation_rates(10e-9, proton_mhz=600.0, labeling=load_scheme("13c15n"))
    ex = relaxation_rates(10e-9, proton_mhz=600.0, labeling=load_scheme("13c15n"), rex={"HB": 3.0})
    assert_allclose(ex.coherences["HBx"] - base.coherences["HBx"], 3.0, rtol=1e-12)
    assert_allclose(ex.coherences["2CBxHBz"], base.coherences["2CBxHBz"], rtol=0)  # HB longitudinal there


def test_beta_proton_geometry_optional_and_geminal_distance():
    # A geometry written for the six backbone nuclei keeps the typical HB partners.
    assert validate_environment(PAIR_ONLY)["HB"] == DEFAULT_ENVIRONMENT["HB"]
    geminal = [p for p in DEFAULT_ENVIRONMENT["HB"] if p.site == "HB"]
    # H-C-H at the tetrahedral angle with C-H 1.09 A: 2 * 1.09 * sin(54.74 deg) = 1.78 A (geometry).
    assert_allclose(geminal[0].distance_m, 1.780e-10, rtol=1e-3)
    with pytest.raises(BackboneError, match="unknown nucleus"):
        validate_environment(dict(PAIR_ONLY, HG=()))


# --------------------------------------------------------------------------------------------------------
# Amide-1H recovery rate
# --------------------------------------------------------------------------------------------------------

# tau_c of 10-40 kDa proteins at 25 C by the 0.5-0.6 ns/kDa rule of thumb (common practice): about 6-25 ns.
_TAU_10_40_KDA = np.array([6e-9, 10e-9, 15e-9, 20e-9, 25e-9])


@pytest.mark.parametrize("mhz", [600.0, 800.0])
@pytest.mark.parametrize("scheme_id", ["15n", "13c15n"])
def test_recovery_time_protonated(scheme_id, mhz):
    # Amide-1H T1 about 0.7-1.5 s in protonated proteins of 10-40 kDa at 600-800 MHz (common practice, from
    # memory), although the rigid-lattice non-selective T1 is far longer (spin diffusion; Kalk & Berendsen,
    # J. Magn. Reson. 24, 343, 1976, from memory).
    h = relaxation_rates(_TAU_10_40_KDA, proton_mhz=mhz, labeling=load_scheme(scheme_id))["H"]
    t1 = 1 / h["R1_recovery"]
    assert np.all((t1 > 0.7) & (t1 < 1.5)), t1
    assert np.all(1 / h["R1_nonselective"][1:] > 5.0)


@pytest.mark.parametrize("mhz", [600.0, 800.0])
def test_recovery_time_deuterated_and_ilv(mhz):
    # Perdeuterated, no protonated methyls: about 1.5-4 s; ILV methyl protonation shortens it again (common
    # practice, from memory).
    deut = relaxation_rates(_TAU_10_40_KDA, proton_mhz=mhz, labeling=load_scheme("2h13c15n"))["H"]
    ilv = relaxation_rates(_TAU_10_40_KDA, proton_mhz=mhz, labeling=load_scheme("2h13c15n-ilv"))["H"]
    t1_deut, t1_ilv = 1 / deut["R1_recovery"], 1 / ilv["R1_recovery"]
    assert np.all((t1_deut > 1.5) & (t1_deut < 4.0)), t1_deut
    assert np.all(t1_ilv < 0.7 * t1_deut)


def test_recovery_model_and_overrides(c13n15):
    # The documented bath model: max(R1_ns, x R1_methyl + (1 - x) R1_ns) + k_water.
    tau = np.array([1e-9, 10e-9, 40e-9])
    bath = ProtonBath(methyl_r1=1.5, water_exchange=0.1, methyl_fraction=0.3)
    h = relaxation_rates(tau, proton_mhz=700.0, labeling=c13n15, proton_bath=bath)["H"]
    ns = h["R1_nonselective"]
    assert_allclose(h["R1_recovery"], np.maximum(ns, 0.3 * 1.5 + 0.7 * ns) + 0.1, rtol=1e-12)
    # No sink and no exchange: the recovery is the non-selective rate itself.
    bare = relaxation_rates(tau, proton_mhz=700.0, labeling=c13n15, proton_bath={"methyl_r1": 0, "water_exchange": 0})
    assert_allclose(bare["H"]["R1_recovery"], bare["H"]["R1_nonselective"], rtol=0)
    assert "R1_recovery" in NUCLEUS_RATES


@pytest.mark.parametrize(
    "bath,match",
    [
        ({"methyl_r1": -1.0}, "methyl_r1"),
        ({"methyl_r1": "fast"}, "methyl_r1"),
        ({"water_exchange": 1e4}, "water_exchange"),
        ({"methyl_fraction": 1.5}, "methyl_fraction"),
        ({"methyl_fraction": "many"}, "methyl_fraction"),
        ({"sink": 1.0}, "unknown key"),
        ("bath", "ProtonBath"),
    ],
)
def test_invalid_proton_bath(c13n15, bath, match):
    with pytest.raises(BackboneError, match=match):
        relaxation_rates(10e-9, proton_mhz=600.0, labeling=c13n15, proton_bath=bath)


def test_minority_alpha_protons_under_fractional_deuteration():
    # Fractional deuteration keeps a minority of 1H at HA: its rates are those of the 1H-bearing molecules.
    # They fall as the surrounding protons are replaced by deuterons (dipolar terms scale with the partner's
    # (gamma^2 S(S+1)), 1/15.9 for 2H: Abragam 1961), and never fall below the bonded CA-HA pair's own R2
    # (Kay, Torchia & Bax 1989 form, written out here) in a 13C-labeled sample.
    from scipy import constants as sc

    tau_c, mhz = 15e-9, 600.0
    r2 = []
    for level in (0.5, 0.7, 0.9, 0.98):
        rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=load_scheme("2h13c15n", deuteration=level))
        assert "HA" in rates.unlabeled and "HA" not in rates.nuclei
        assert "HA" in rates.minority
        r2.append(float(rates.minority["HA"]["R2"]))
        assert float(rates.coherence("HAx")) == r2[-1]
    assert all(a > b for a, b in zip(r2, r2[1:]))
    g_h, g_c = 2.6752218744e8, 6.728284e7
    d = sc.mu_0 / (4 * np.pi) * sc.hbar * g_h * g_c / (1.09e-10) ** 3
    b0 = 2 * np.pi * mhz * 1e6 / g_h
    w_h, w_c = g_h * b0, g_c * b0

    def jw(w):
        return 0.4 * tau_c / (1 + (w * tau_c) ** 2)

    pair = d**2 / 8 * (4 * jw(0) + jw(w_h - w_c) + 3 * jw(w_h) + 6 * jw(w_c) + 6 * jw(w_h + w_c))
    assert r2[-1] > pair


def test_no_minority_without_residual_protons():
    rates = relaxation_rates(15e-9, proton_mhz=600.0, labeling=load_scheme("2h13c15n", deuteration=1.0))
    assert not rates.minority
    with pytest.raises(BackboneError):
        rates.coherence("HAx")
