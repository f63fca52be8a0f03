"""The rate engine against published formulas and figures, recomputed inline in each test."""

import dataclasses
import json

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants as sc

from backbone.constants import CSA, GAMMA, CSATensor
from backbone.errors import BackboneError
from backbone.labeling import load_scheme, registered_schemes
from backbone.relaxation import COHERENCES, NUCLEI, RateSet, relaxation_rates

SCHEMES = sorted(registered_schemes())
#: No remote partners: the isolated 15N-1H pair of the textbook formulas.
PAIR_ONLY = {n: () for n in NUCLEI}


@pytest.fixture(scope="module")
def n15():
    return load_scheme("15n")


def _b0(mhz):
    return 2 * np.pi * np.asarray(mhz, dtype=float) * 1e6 / GAMMA["1H"].value


def _ktb(tau_c, mhz, *, r=1.02e-10, dsigma=-160e-6):
    """15N R1, R2, NOE of a rigid N-H pair, Kay, Torchia & Bax, Biochemistry 28, 8972 (1989), eqs. 1-3,
    with signed Larmor frequencies (see backbone.relaxation.terms) and J = (2/5) tc/(1 + w^2 tc^2)."""
    gh, gn = GAMMA["1H"].value, GAMMA["15N"].value
    wh, wn = gh * _b0(mhz), gn * _b0(mhz)

    def j(w):
        return 0.4 * tau_c / (1 + (w * tau_c) ** 2)

    d2 = (sc.mu_0 / (4 * np.pi) * sc.hbar * gh * gn / r**3) ** 2
    c2 = (wn * dsigma) ** 2 / 3
    r1 = d2 / 4 * (j(wn - wh) + 3 * j(wn) + 6 * j(wn + wh)) + c2 * j(wn)
    r2 = d2 / 8 * (4 * j(0) + j(wn - wh) + 3 * j(wn) + 6 * j(wh) + 6 * j(wn + wh)) + c2 / 6 * (4 * j(0) + 3 * j(wn))
    noe = 1 + d2 / (4 * r1) * (gh / gn) * (6 * j(wn + wh) - j(wn - wh))
    return r1, r2, noe


def test_physics_notes_sanity_figures(n15):
    # Rigid, 1.02 A, -160 ppm, 600 MHz, tau_c 8 ns: 15N R1 1.63, R2 11.8, NOE 0.82 (Kay, Torchia & Bax 1989
    # formulas; figures of the project's physics notes, recomputed inline here).
    rates = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15, environment=PAIR_ONLY)
    r1, r2, noe = _ktb(8e-9, 600.0)
    assert_allclose(rates["N"]["R1"], r1, rtol=1e-12)
    assert_allclose(rates["N"]["R2"], r2, rtol=1e-12)
    assert_allclose(rates["N"]["NOE"], noe, rtol=1e-12)
    assert_allclose([r1, r2, noe], [1.63, 11.8, 0.82], rtol=1e-2)


@pytest.mark.parametrize("mhz", [500.0, 800.0, 1200.0])
@pytest.mark.parametrize("tau_c", [0.3e-9, 5e-9, 60e-9])
def test_nitrogen_rates_match_kay_torchia_bax_on_a_grid(n15, tau_c, mhz):
    rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=n15, environment=PAIR_ONLY)
    assert_allclose([rates["N"][k] for k in ("R1", "R2", "NOE")], _ktb(tau_c, mhz), rtol=1e-12)


@pytest.mark.parametrize("mhz", [600.0, 700.0, 800.0, 900.0])
@pytest.mark.parametrize("tau_c_ns", [4.0, 6.0, 10.0, 15.0, 20.0, 30.0])
def test_tau_c_from_r2_over_r1(n15, tau_c_ns, mhz):
    # tau_c ~ sqrt(6 R2/R1 - 7) / (4 pi nu_N) for rigid tumbling when J(wH) terms are negligible
    # (Kay, Torchia & Bax, Biochemistry 28, 8972, 1989): recovers the input within 5 %.
    rates = relaxation_rates(tau_c_ns * 1e-9, proton_mhz=mhz, labeling=n15, environment=PAIR_ONLY)
    nu_n = abs(GAMMA["15N"].value * _b0(mhz)) / (2 * np.pi)
    estimate = np.sqrt(6 * rates["N"]["R2"] / rates["N"]["R1"] - 7) / (4 * np.pi * nu_n)
    assert_allclose(estimate, tau_c_ns * 1e-9, rtol=0.05)


def test_trosy_optimum_near_one_gigahertz(n15):
    # With r(NH) = 1.04 A, dsigma = -160 ppm and a collinear tensor, the 15N TROSY component is narrowest near
    # 1 GHz 1H (Pervushin, Riek, Wider & Wuthrich, PNAS 94, 12366, 1997). Minimum found on a dense grid.
    mhz = np.linspace(500.0, 1500.0, 2001)
    tensor = CSATensor("15N collinear", "test", delta=-160e-6, angle_deg=0.0)
    rates = relaxation_rates(
        100e-9, proton_mhz=mhz, labeling=n15, environment=PAIR_ONLY, nh_distance=1.04e-10, n_csa=tensor
    )
    best = mhz[np.argmin(rates["N"]["R2_trosy"])]
    assert_allclose(best, 1000.0, rtol=0.05)
    # The J(0) coefficient of the slow component, p^2 + delta^2 - 2 p delta P2 (p^2 = d^2/8, delta^2 = c^2/6),
    # is smallest at delta = p P2 (Pervushin et al. 1997); with P2 = 1: |wN| |dsigma| / sqrt(18) = |d| / sqrt(8).
    d = sc.mu_0 / (4 * np.pi) * sc.hbar * GAMMA["1H"].value * GAMMA["15N"].value / (1.04e-10) ** 3
    w_n = abs(d) / np.sqrt(8) * np.sqrt(18) / 160e-6
    analytic = w_n / abs(GAMMA["15N"].value) * GAMMA["1H"].value / (2 * np.pi) / 1e6
    assert_allclose(best, analytic, rtol=0.01)


def test_pair_coherences_match_redfield_formulas(n15):
    # Isolated N-H pair with both CSAs; expected values written out from the Redfield expressions
    # (Abragam 1961; Goldman 1984; Cavanagh et al. 2007 ch. 5, from memory).
    tau_c, mhz = 12e-9, 800.0
    wh, wn = GAMMA["1H"].value * _b0(mhz), GAMMA["15N"].value * _b0(mhz)

    def j(w):
        return 0.4 * tau_c / (1 + (w * tau_c) ** 2)

    d = sc.mu_0 / (4 * np.pi) * sc.hbar * GAMMA["1H"].value * GAMMA["15N"].value / 1.02e-10**3
    cn = wn * CSA["N"].delta_eff / np.sqrt(3)
    ch = wh * CSA["H"].delta_eff / np.sqrt(3)
    rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=n15, environment=PAIR_ONLY)
    coh = rates.coherences
    n_csa_t, h_csa_t = cn**2 / 6 * (4 * j(0) + 3 * j(wn)), ch**2 / 6 * (4 * j(0) + 3 * j(wh))
    n_flip, h_flip = d**2 / 8 * 6 * j(wh), d**2 / 8 * 6 * j(wn)
    base_n = d**2 / 8 * (4 * j(0) + j(wn - wh) + 3 * j(wn) + 6 * j(wn + wh))
    base_h = d**2 / 8 * (4 * j(0) + j(wh - wn) + 3 * j(wh) + 6 * j(wh + wn))
    assert_allclose(coh["Nx"], base_n + n_flip + n_csa_t, rtol=1e-12)
    assert_allclose(coh["2NxHz"], base_n + n_csa_t + ch**2 * j(wh), rtol=1e-12)
    assert_allclose(coh["Nx_hdec"], base_n + n_csa_t + 0.5 * (n_flip + ch**2 * j(wh)), rtol=1e-12)
    assert_allclose(coh["Hx"], base_h + h_flip + h_csa_t, rtol=1e-12)
    r1_n = d**2 / 4 * (j(wn - wh) + 3 * j(wn) + 6 * j(wn + wh)) + cn**2 * j(wn)
    assert_allclose(coh["2HxNz"], base_h + h_csa_t + cn**2 * j(wn), rtol=1e-12)
    assert_allclose(coh["Nz"], r1_n, rtol=1e-12)
    assert_allclose(coh["2NzHz"], 3 * d**2 / 4 * (j(wn) + j(wh)) + cn**2 * j(wn) + ch**2 * j(wh), rtol=1e-12)
    mq = d**2 / 8 * (j(wh - wn) + 3 * j(wh) + 3 * j(wn) + 6 * j(wh + wn))
    assert_allclose(coh["2HxNx"], mq + n_csa_t + h_csa_t, rtol=1e-12)
    p2n = (3 * np.cos(np.radians(CSA["N"].angle_deg)) ** 2 - 1) / 2
    eta_n = abs(d * cn * p2n / (2 * np.sqrt(3)) * (4 * j(0) + 3 * j(wn)))
    assert_allclose(rates["N"]["eta_xy"], eta_n, rtol=1e-12)
    assert_allclose(rates["N"]["R2_trosy"], 0.5 * (coh["Nx"] + coh["2NxHz"]) - eta_n, rtol=1e-12)
    assert_allclose(rates["N"]["R2_antitrosy"], 0.5 * (coh["Nx"] + coh["2NxHz"]) + eta_n, rtol=1e-12)
    assert_allclose(rates["N"]["eta_z"], abs(np.sqrt(3) * d * cn * p2n * j(wn)), rtol=1e-12)


def test_order_parameter_with_fast_internal_motion_scales_rates(n15):
    # Lipari & Szabo 1982: tau_e -> 0 makes every J, hence every rate of the pair, scale by S^2.
    rigid = relaxation_rates(10e-9, proton_mhz=700.0, labeling=n15, environment=PAIR_ONLY)
    mobile = relaxation_rates(10e-9, proton_mhz=700.0, labeling=n15, environment=PAIR_ONLY, s2=0.8, tau_e=0.0)
    for key in ("R1", "R2", "R2_trosy", "eta_xy"):
        assert_allclose(mobile["N"][key], 0.8 * rigid["N"][key], rtol=1e-12)
    assert_allclose(mobile["N"]["NOE"], rigid["N"]["NOE"], rtol=1e-12)  # a ratio of rates


@pytest.mark.parametrize("scheme_id", SCHEMES)
def test_every_scheme_gives_finite_positive_rates(scheme_id):
    rates = relaxation_rates(
        np.array([0.1e-9, 8e-9, 500e-9]), proton_mhz=np.array([[100.0], [1500.0]]), labeling=load_scheme(scheme_id)
    )
    assert rates.shape == (2, 3)
    for nucleus, named in rates.nuclei.items():
        for key, value in named.items():
            assert value.shape == (2, 3)
            assert np.all(np.isfinite(value)), (nucleus, key)
            if key != "NOE":
                assert np.all(value > 0), (nucleus, key)
    for name, value in rates.coherences.items():
        assert np.all(np.isfinite(value) & (value > 0)), name


@pytest.mark.parametrize("scheme_id", SCHEMES)
def test_r2_grows_with_tau_c(scheme_id):
    # Slower tumbling broadens every line: J(0) = (2/5) tau_c dominates R2 (Abragam 1961; Kay, Torchia & Bax 1989).
    tau = np.geomspace(0.1e-9, 500e-9, 200)[:, None]
    rates = relaxation_rates(tau, proton_mhz=np.array([[100.0, 600.0, 1500.0]]), labeling=load_scheme(scheme_id))
    for nucleus, named in rates.nuclei.items():
        assert np.all(np.diff(named["R2"], axis=0) > 0), nucleus
    # Like-spin protons: selective rho + cross relaxation sigma is the non-selective rate (Solomon 1955), and
    # sigma < 0 for slow tumbling makes the selective rate the larger one there.
    h = rates["H"]
    assert np.all(h["R1_selective"][-1] > h["R1_nonselective"][-1])
    assert np.all(h["R1"] == h["R1_nonselective"])


def test_fifteen_n_scheme_leaves_carbons_out(n15):
    # 13C at natural abundance, 1.07 % (Harris et al., Pure Appl. Chem. 73, 1795, 2001).
    rates = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15)
    assert set(rates.nuclei) == {"H", "N", "HA"}
    assert rates.unlabeled == pytest.approx({"CA": 0.0107, "C": 0.0107, "CB": 0.0107})
    assert not {"CAx", "Cx", "2CAxNz", "2CxNz", "2CAxCz", "CBx", "Cz"} & set(rates.coherences)
    with pytest.raises(BackboneError, match="not labeled"):
        rates["CA"]
    with pytest.raises(BackboneError, match="needs CA"):
        rates.coherence("2CAxNz")
    with pytest.raises(BackboneError, match="unknown coherence"):
        rates.coherence("Qx")
    with pytest.raises(BackboneError, match="unknown nucleus"):
        rates["O"]


def test_perdeuteration_removes_alpha_protons_and_slows_antiphase_decay():
    # Perdeuteration removes the 1H-1H spin diffusion that makes 2NxHz decay fast in large protonated
    # proteins (Pervushin et al. 1997; common practice), and HA is then 2H.
    protonated = relaxation_rates(25e-9, proton_mhz=800.0, labeling=load_scheme("13c15n"))
    deuterated = relaxation_rates(25e-9, proton_mhz=800.0, labeling=load_scheme("2h13c15n"))
    assert "HA" in protonated.nuclei and "HA" not in deuterated.nuclei
    assert deuterated.unlabeled["HA"] == pytest.approx(0.02)
    for name in ("2NxHz", "Hx", "CAx", "2HxNx", "H_trosy"):
        assert deuterated.coherences[name] < protonated.coherences[name], name
    assert deuterated["H"]["R1_selective"] < 0.3 * protonated["H"]["R1_selective"]


def test_all_documented_coherences_present_when_fully_labeled():
    rates = relaxation_rates(8e-9, proton_mhz=600.0, labeling=load_scheme("13c15n"))
    assert list(rates.coherences) == list(COHERENCES)
    assert rates.coherence("N_trosy") == rates["N"]["R2_trosy"]


def test_antiphase_rates_add_partner_longitudinal_rate():
    # 2IxSz = R2(I) with the I-S flip term of S removed, plus R1 of S from its other partners (module doc).
    rates = relaxation_rates(8e-9, proton_mhz=600.0, labeling=load_scheme("13c15n"))
    c = rates.coherences
    assert c["2CAxNz"] > c["CAx"] and c["2CxNz"] > c["Cx"] and c["2CAxCz"] > c["CAx"]
    assert c["2CAxNz"] - c["CAx"] < rates["N"]["R1"]  # N's R1 less its CA(i) part, plus a small flip difference


def test_broadcasting_and_json_shape(n15):
    tau = np.array([2e-9, 8e-9, 20e-9])[:, None]
    mhz = np.array([600.0, 900.0])[None, :]
    grid = relaxation_rates(tau, proton_mhz=mhz, labeling=n15)
    assert grid.shape == (3, 2)
    point = relaxation_rates(20e-9, proton_mhz=900.0, labeling=n15)
    assert_allclose(grid["N"]["R2"][2, 1], point["N"]["R2"], rtol=1e-13)
    assert_allclose(
        grid.coherences["2NxHz"][0, 0],
        relaxation_rates(2e-9, proton_mhz=600.0, labeling=n15).coherences["2NxHz"],
        rtol=1e-13,
    )
    out = point.as_dict()
    json.dumps(out)
    # Contract of ARCHITECTURE.md: rates per nucleus with R1, R2 (and R2_trosy, eta_xy for H and N).
    assert set(out["rates"]) == {"H", "N", "HA"}
    assert {"R1", "R2", "R2_trosy", "eta_xy"} <= set(out["rates"]["H"]) and {"R1", "R2", "R2_trosy", "eta_xy"} <= set(
        out["rates"]["N"]
    )
    assert isinstance(out["rates"]["N"]["R2"], float)
    assert out["conditions"]["tau_c_ns"] == pytest.approx(20.0) and out["conditions"]["field_mhz"] == 900.0
    assert out["conditions"]["labeling"] == "15n"
    assert np.array(grid.as_dict()["rates"]["N"]["R1"]).shape == (3, 2)


def test_rateset_is_read_only(n15):
    rates = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15)
    assert isinstance(rates, RateSet)
    with pytest.raises(dataclasses.FrozenInstanceError):
        rates.labeling = "other"
    with pytest.raises(ValueError):
        rates["N"]["R2"][...] = 0.0
    with pytest.raises(TypeError):
        rates.nuclei["N"]["R2"] = 0.0


def test_rex_is_added_to_transverse_rates_only(n15):
    base = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15)
    ex = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15, rex={"N": 5.0, "H": np.array(2.0)})
    assert_allclose(ex["N"]["R2"] - base["N"]["R2"], 5.0, rtol=1e-12)
    assert_allclose(ex["N"]["R2_trosy"] - base["N"]["R2_trosy"], 5.0, rtol=1e-12)
    assert_allclose(ex["N"]["R1"], base["N"]["R1"], rtol=0)
    assert_allclose(ex.coherences["2NxHz"] - base.coherences["2NxHz"], 5.0, rtol=1e-12)
    assert_allclose(ex.coherences["2HxNx"] - base.coherences["2HxNx"], 7.0, rtol=1e-12)
    assert_allclose(ex.coherences["Hx"] - base.coherences["Hx"], 2.0, rtol=1e-12)
    assert_allclose(ex.coherences["2NzHz"], base.coherences["2NzHz"], rtol=0)


def test_environment_by_name_and_override(n15):
    helix = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15, environment="helix")
    sheet = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15, environment="sheet")
    pair = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15, environment=PAIR_ONLY)
    # Remote protons only add relaxation.
    assert helix["H"]["R2"] > pair["H"]["R2"] and sheet["H"]["R2"] > pair["H"]["R2"]
    one_proton = dict(PAIR_ONLY, H=[("H", 2.8e-10)])
    extra = relaxation_rates(8e-9, proton_mhz=600.0, labeling=n15, environment=one_proton)
    # One proton at 2.8 A adds the like-spin transverse rate (d^2/8)[5J0 + 9J(w) + 6J(2w)] (Abragam 1961).
    wh = GAMMA["1H"].value * _b0(600.0)

    def j(w):
        return 0.4 * 8e-9 / (1 + (w * 8e-9) ** 2)

    d = sc.mu_0 / (4 * np.pi) * sc.hbar * GAMMA["1H"].value ** 2 / 2.8e-10**3
    assert_allclose(extra["H"]["R2"] - pair["H"]["R2"], d**2 / 8 * (5 * j(0) + 9 * j(wh) + 6 * j(2 * wh)), rtol=1e-10)


@pytest.mark.parametrize(
    "kwargs,match",
    [
        ({"tau_c": 1e-6}, "tau_c"),
        ({"tau_c": 5e-11}, "tau_c"),
        ({"proton_mhz": 50.0}, "field"),
        ({"proton_mhz": np.nan}, "field"),
        ({"s2": 1.5}, "S2"),
        ({"tau_e": 20e-9}, "tau_e"),
        ({"nh_distance": 1.02}, "nh_distance"),
        ({"nh_distance": "short"}, "nh_distance"),
        ({"n_csa": -160.0}, "n_csa"),
        ({"n_csa": "large"}, "n_csa"),
        ({"h_csa": 15.0}, "h_csa"),
        ({"rex": {"O": 1.0}}, "rex"),
        ({"rex": {"N": -1.0}}, "rex"),
        ({"rex": [1.0]}, "rex"),
        ({"rex": {"N": np.ones(3)}}, "rex"),
        ({"environment": "coil"}, "unknown geometry"),
        ({"environment": {"H": ()}}, "missing entry"),
        ({"environment": dict(PAIR_ONLY, O=())}, "unknown nucleus"),
        ({"environment": dict(PAIR_ONLY, H=[("HX", 2.8e-10)])}, "not a labeling site"),
        ({"environment": dict(PAIR_ONLY, H=[("HA", 2.8)])}, "metres"),
        ({"environment": dict(PAIR_ONLY, H=[("HA", 2.8e-10, -1)])}, "count"),
        ({"environment": dict(PAIR_ONLY, H=[("HA", "far")])}, "numbers"),
        ({"environment": dict(PAIR_ONLY, H=[("HA",)])}, "partner is"),
        ({"environment": dict(PAIR_ONLY, H=[{"site": "HA", "far": 1}])}, "unknown key"),
        ({"environment": dict(PAIR_ONLY, H=[{"site": "HA"}])}, "at least"),
        ({"environment": dict(PAIR_ONLY, H=[("HA", 2.8e-10, 1, 5)])}, "label"),
        ({"environment": dict(PAIR_ONLY, N=[("H", 1.02e-10)])}, "nh_distance"),
        ({"environment": dict(PAIR_ONLY, N="H")}, "list of partners"),
        ({"environment": 3}, "mapping"),
    ],
)
def test_invalid_arguments_raise(n15, kwargs, match):
    args = {"tau_c": 8e-9, "proton_mhz": 600.0, "labeling": n15} | kwargs
    tau_c = args.pop("tau_c")
    with pytest.raises(BackboneError, match=match):
        relaxation_rates(tau_c, **args)


def test_shapes_that_do_not_broadcast(n15):
    with pytest.raises(BackboneError, match="broadcast"):
        relaxation_rates(np.ones(3) * 1e-8, proton_mhz=np.full(2, 600.0), labeling=n15)


class _NotAScheme:
    pass


class _BadFraction:
    id = "bad"

    def isotope(self, site):
        return {"H": "1H", "N": "15N"}.get(site, "12C")

    def fraction(self, site):
        return 1.5


def test_labeling_must_be_a_scheme():
    with pytest.raises(BackboneError, match="labeling"):
        relaxation_rates(8e-9, proton_mhz=600.0, labeling=_NotAScheme())
    with pytest.raises(BackboneError, match="outside"):
        relaxation_rates(8e-9, proton_mhz=600.0, labeling=_BadFraction())


class _DuckScheme:
    """Anything with fraction(site) and isotope(site) is accepted (interface of backbone.labeling)."""

    def __init__(self, h_side: float):
        self._h_side = h_side

    def fraction(self, site):
        return {"H": 1.0, "N": 1.0}.get(site, self._h_side if site.startswith("H") else 0.0107)

    def isotope(self, site):
        if site.startswith("H"):
            return "1H" if self.fraction(site) > 0.5 else "2H"
        return "15N" if site == "N" else "12C"


def test_duck_typed_labeling_and_deuteron_partners():
    # Remote partners half 2H: the HA contribution to N's R1 is the fraction-weighted sum of a 1H and a 2H
    # partner (the 2H term through its own gamma and spin, Abragam 1961).
    env = dict(PAIR_ONLY, N=[("HA", 2.09e-10)])
    full = relaxation_rates(8e-9, proton_mhz=600.0, labeling=_DuckScheme(1.0), environment=env)
    half = relaxation_rates(8e-9, proton_mhz=600.0, labeling=_DuckScheme(0.5), environment=env)
    none = relaxation_rates(8e-9, proton_mhz=600.0, labeling=_DuckScheme(0.5), environment=PAIR_ONLY)
    assert full.labeling == "_DuckScheme"
    added_h = full["N"]["R1"] - none["N"]["R1"]
    added_half = half["N"]["R1"] - none["N"]["R1"]
    wn, wd = GAMMA["15N"].value * _b0(600.0), GAMMA["2H"].value * _b0(600.0)

    def j(w):
        return 0.4 * 8e-9 / (1 + (w * 8e-9) ** 2)

    d_nd = sc.mu_0 / (4 * np.pi) * sc.hbar * GAMMA["15N"].value * GAMMA["2H"].value / 2.09e-10**3
    deuteron_r1 = 8 / 3 * d_nd**2 / 4 * (j(wn - wd) + 3 * j(wn) + 6 * j(wn + wd))
    assert_allclose(added_half, 0.5 * added_h + 0.5 * deuteron_r1, rtol=1e-10)
    assert "HA" not in half.nuclei and half.unlabeled["HA"] == 0.5


def test_empty_grid_is_an_error(n15):
    with pytest.raises(BackboneError, match="at least one"):
        relaxation_rates(np.array([]), proton_mhz=600.0, labeling=n15)


def test_validate_environment_normalizes_entries():
    from backbone.relaxation import DEFAULT_ENVIRONMENT, ENVIRONMENTS, Partner, validate_environment

    env = validate_environment(dict(PAIR_ONLY, H=[("HA", 2.8e-10), {"site": "HB", "distance_m": 3e-10, "count": 2}]))
    assert env["H"] == (Partner("HA", 2.8e-10, 1.0, ""), Partner("HB", 3e-10, 2.0, ""))
    assert validate_environment("typical") is DEFAULT_ENVIRONMENT
    # The default is the documented half-helix, half-sheet r^-6 average of every entry.
    for nucleus in NUCLEI:
        helix = {p.label: p for p in ENVIRONMENTS["helix"][nucleus]}
        sheet = {p.label: p for p in ENVIRONMENTS["sheet"][nucleus]}
        for p in DEFAULT_ENVIRONMENT[nucleus]:
            weight = sum(0.5 * g[p.label].distance_m ** -6 for g in (helix, sheet) if p.label in g)
            assert_allclose(p.distance_m, weight ** (-1 / 6), rtol=1e-12)


def test_tumbling_functions_reexported_lazily():
    import backbone.relaxation as relaxation
    from backbone.relaxation import tumbling

    assert relaxation.tau_c_from_mass is tumbling.tau_c_from_mass
    assert relaxation.solvent_viscosity is tumbling.solvent_viscosity
    with pytest.raises(AttributeError):
        _ = relaxation.no_such_function
