"""Walking experiment models: textbook limits written out, feasibility, optimized vs textbook, common practice."""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from backbone.errors import BackboneError
from backbone.experiments import (
    NoRelaxation,
    load_experiment,
    objective_value,
    optimize_delays,
    peak_amplitudes,
    registered_experiments,
    resolve,
    textbook_delays,
    typical_chain,
    walk,
)
from backbone.graph import build_chain
from backbone.labeling import load_scheme, registered_schemes
from backbone.relaxation import relaxation_rates

EXPERIMENTS = list(registered_experiments())
SCHEMES = list(registered_schemes())

# Coupling magnitudes [Hz] written out (Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR
# Spectroscopy, 2nd ed. 2007; Sattler, Schleucher & Griesinger, Prog. NMR Spectrosc. 34, 93, 1999; from memory):
J_NH, J_NC, J1_NCA, J2_NCA, J_CACB = 92.0, 15.0, 11.0, 7.0, 35.0
F13C = F15N = 0.99  # enrichment of the bundled 13c15n scheme (models/labeling/13c15n.toml)


@pytest.fixture(scope="module")
def chain():
    return typical_chain()


def _zero_walk(name, delays, scheme="13c15n", G=None, residue=3):
    G = typical_chain() if G is None else G
    s = load_scheme(scheme)
    r = resolve(name, G, residue, s)
    base = textbook_delays(r)
    base.update(delays)
    return walk(name, G, residue, s, NoRelaxation(), delays=base)


# ---------------------------------------------------------------------------------------------------------
# No-relaxation limits against the textbook transfer functions
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("T", [0.012, 0.022, 0.0333, 0.028])
def test_hnco_is_sin_squared_without_relaxation(T):
    # HNCO: sin(pi 1J(N,C') T) per transfer, out and back (Kay, Ikura, Tschudin & Bax, J. Magn. Reson. 89, 496,
    # 1990; Cavanagh et al. 2007). INEPT delays at 1/(2J) give 1; isotopomer 15N x 13C'.
    w = _zero_walk("HNCO", {"T_NC": T, "tau_NH": 1 / (2 * J_NH)})
    expect = F15N * F13C * math.sin(math.pi * J_NC * T) ** 2
    assert_allclose(float(w.throughput("C(i-1)")), expect, rtol=1e-12)


@pytest.mark.parametrize("T", [0.018, 0.022, 0.0314, 0.040])
def test_hnca_own_and_preceding_without_relaxation(T):
    # HNCA: own sin(pi 1J T) cos(pi 2J T), preceding sin(pi 2J T) cos(pi 1J T) per transfer (Sattler et al.
    # 1999; Cavanagh et al. 2007), squared over the out-and-back.
    w = _zero_walk("HNCA", {"T_NCA": T, "tau_NH": 1 / (2 * J_NH)})
    own = (math.sin(math.pi * J1_NCA * T) * math.cos(math.pi * J2_NCA * T)) ** 2
    pre = (math.sin(math.pi * J2_NCA * T) * math.cos(math.pi * J1_NCA * T)) ** 2
    assert_allclose(float(w.throughput("CA(i)")), F15N * F13C * own, rtol=1e-12)
    assert_allclose(float(w.throughput("CA(i-1)")), F15N * F13C * pre, rtol=1e-12)


@pytest.mark.parametrize("tau", [0.003, 0.0071, 0.010])
def test_hncacb_split_cos2_sin2(tau):
    # HNCACB: CA pathway cos^2(pi 1J(CA,CB) tau), CB pathway -sin^2 over the out-and-back split (Wittekind &
    # Mueller, J. Magn. Reson. B 101, 201, 1993; Sattler et al. 1999).
    T = 0.022
    w = _zero_walk("HNCACB", {"T_NCA": T, "tau_NH": 1 / (2 * J_NH), "tau_CACB": tau})
    nca = (math.sin(math.pi * J1_NCA * T) * math.cos(math.pi * J2_NCA * T)) ** 2
    ca = F15N * F13C * nca * math.cos(math.pi * J_CACB * tau) ** 2
    cb = -F15N * F13C * F13C * nca * math.sin(math.pi * J_CACB * tau) ** 2
    assert_allclose(float(w.throughput("CA(i)")), ca, rtol=1e-12)
    assert_allclose(float(w.throughput("CB(i)")), cb, rtol=1e-12)


def test_hn_ca_co_passive_cacb_and_glycine():
    # HN(CA)CO: during CA -> C' the CA-CB coupling evolves passively, cos(pi 1J(CA,CB) tau) per period
    # (Clubb, Thanabal & Wagner, J. Magn. Reson. 97, 213, 1992); Gly has no CB, so no such factor.
    tau, T = 0.0045, 0.022
    d = {"T_NCA": T, "tau_NH": 1 / (2 * J_NH), "tau_CAC": tau}
    nca = (math.sin(math.pi * J1_NCA * T) * math.cos(math.pi * J2_NCA * T)) ** 2
    cac = math.sin(math.pi * 55.0 * tau) ** 2
    w = _zero_walk("HN(CA)CO", d)
    # The passive factor is the isotopomer average over the CB label: f cos + (1 - f), f = 0.99.
    passive = (F13C * math.cos(math.pi * J_CACB * tau) + (1 - F13C)) ** 2
    assert_allclose(float(w.throughput("C(i)")), F15N * F13C**2 * nca * cac * passive, rtol=1e-12)
    wg = _zero_walk("HN(CA)CO", d, G=build_chain("ALG"))
    assert_allclose(float(wg.throughput("C(i)")), F15N * F13C**2 * nca * cac, rtol=1e-12)


def test_textbook_delays_are_the_zero_rate_optima():
    s = load_scheme("13c15n")
    G = typical_chain()
    # 1/(2J) for an INEPT and 33.3 ms for N->C' with 15 Hz (Cavanagh et al. 2007); 31.4 ms for the HNCA own peak
    # with 11/7 Hz (sin(pi 11 T) cos(pi 7 T) maximized; Sattler et al. 1999), checked by a dense scan here.
    hnco = textbook_delays(resolve("HNCO", G, 3, s))
    assert_allclose(hnco["T_NC"], 1 / (2 * J_NC), rtol=1e-7)
    assert_allclose(hnco["tau_NH"], 1 / (2 * J_NH), rtol=1e-7)
    own = textbook_delays(resolve("HNCA", G, 3, s), objective="CA(i)")["T_NCA"]
    t = np.linspace(0.0, 0.045, 450001)
    scan = t[np.argmax(np.sin(np.pi * J1_NCA * t) * np.cos(np.pi * J2_NCA * t))]
    assert_allclose(own, scan, atol=2e-7)
    assert_allclose(own * 1e3, 31.4, atol=0.05)


@pytest.mark.parametrize("scheme", SCHEMES)
@pytest.mark.parametrize("name", EXPERIMENTS)
def test_zero_rate_walks_are_bounded(name, scheme, chain):
    s = load_scheme(scheme)
    w = walk(name, chain, 3, s, NoRelaxation())
    for p in w.peaks:
        v = np.asarray(p.throughput)
        assert np.all(np.isfinite(v)) and np.all(np.abs(v) <= 1.0)
        if not p.feasible:
            assert np.all(v == 0.0) and p.reason


# ---------------------------------------------------------------------------------------------------------
# With relaxation: every model and scheme
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("scheme", SCHEMES)
@pytest.mark.parametrize("name", EXPERIMENTS)
def test_optimized_beats_textbook_on_a_grid(name, scheme, chain):
    s = load_scheme(scheme)
    rates = relaxation_rates(np.array([[5e-9], [15e-9], [40e-9]]), proton_mhz=np.array([600.0, 900.0]), labeling=s)
    r = resolve(name, chain, 3, s)
    model = load_experiment(name)
    # TROSY versions are checked under the perdeuterated scheme, where they are used (keeps the suite fast).
    both = [False, True] if scheme == "2h13c15n" else [False]
    modes = [True] if model.trosy_only else (both if model.trosy_capable else [False])
    for trosy in modes:
        opt = optimize_delays(r, rates, trosy=trosy)
        w_opt = walk(name, chain, 3, s, rates, delays=opt.delays, trosy=trosy, resolved=r)
        w_tb = walk(name, chain, 3, s, rates, trosy=trosy, resolved=r)
        for p in w_opt.peaks + w_tb.peaks:
            v = np.asarray(p.throughput)
            assert v.shape == (3, 2)
            assert np.all(np.isfinite(v)) and np.all(np.abs(v) <= 1.0)
        if not r.feasible:
            assert not w_opt.feasible and w_opt.reason
            continue
        tb = textbook_delays(r, trosy=trosy)
        f_opt = objective_value(peak_amplitudes(r, rates, opt.delays, trosy=trosy), opt.objective)
        f_tb = objective_value(peak_amplitudes(r, rates, tb, trosy=trosy), opt.objective)
        assert np.all(f_opt >= f_tb - 1e-9)


def test_grid_is_elementwise(chain):
    # Vectorization: a grid walk equals the walks at each point.
    s = load_scheme("13c15n")
    tc = np.array([6e-9, 12e-9, 25e-9])
    mhz = np.array([500.0, 800.0])
    grid = relaxation_rates(tc[:, None], proton_mhz=mhz[None, :], labeling=s)
    r = resolve("HNCA", chain, 3, s)
    opt = optimize_delays(r, grid)
    w = walk("HNCA", chain, 3, s, grid, delays=opt.delays, resolved=r)
    for a in range(3):
        for b in range(2):
            one = relaxation_rates(tc[a], proton_mhz=mhz[b], labeling=s)
            o1 = optimize_delays(r, one)
            w1 = walk("HNCA", chain, 3, s, one, delays=o1.delays, resolved=r)
            assert_allclose(w.throughput("CA(i-1)")[a, b], w1.throughput("CA(i-1)"), rtol=1e-6)


# ---------------------------------------------------------------------------------------------------------
# Common practice
# ---------------------------------------------------------------------------------------------------------


def _best(name, scheme="13c15n", tau_c=12e-9, mhz=700.0, objective=None):
    s = load_scheme(scheme)
    rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=s)
    r = resolve(name, typical_chain(), 3, s)
    opt = optimize_delays(r, rates, objective=objective)
    return opt, walk(name, typical_chain(), 3, s, rates, delays=opt.delays, resolved=r)


def test_hnco_is_the_most_sensitive_triple_resonance_experiment():
    # Common practice (Sattler et al. 1999): HNCO uses only the strong 1J(N,C') and is the most sensitive.
    values = {}
    for name in EXPERIMENTS:
        if name in ("HSQC", "TROSY"):
            continue
        opt, w = _best(name)
        values[name] = min(abs(float(p.throughput)) for p in w.peaks if p.feasible)
    assert max(values, key=values.get) == "HNCO"


def test_hnca_preceding_peak_is_weaker():
    # Common practice: 2J(N,CA(i-1)) < 1J(N,CA), so the preceding HNCA peak is the weaker one.
    _, w = _best("HNCA")
    assert abs(float(w.throughput("CA(i-1)"))) < abs(float(w.throughput("CA(i)")))


@pytest.mark.parametrize("tau_c, mhz", [(10e-9, 600.0), (12e-9, 700.0), (15e-9, 800.0)])
def test_n_to_ca_delay_for_a_mid_size_protein(tau_c, mhz):
    # Common practice: the N->CA transfer of HNCA is set near 22-24 ms for mid-size proteins (Sattler et al. 1999,
    # from memory). We accept 18-28 ms because the model's weakest-peak objective balances both peaks.
    opt, _ = _best("HNCA", tau_c=tau_c, mhz=mhz)
    assert 0.018 <= float(opt.delays["T_NCA"]) <= 0.028


def test_n_to_c_optimum_shorter_than_half_over_j():
    # With appreciable R2(N) the optimum of sin(pi J T) e^(-RT) is below 1/(2J) (Cavanagh et al. 2007).
    opt, _ = _best("HNCO", tau_c=15e-9, mhz=800.0)
    assert float(opt.delays["T_NC"]) < 1 / (2 * J_NC) - 1e-3


def test_trosy_wins_for_large_deuterated_proteins_at_high_field():
    # Pervushin, Riek, Wider & Wuthrich, PNAS 94, 12366 (1997): TROSY gains for large proteins at high field;
    # for a small protein the kept half of the signal makes it lose against the enhanced HSQC.
    def value(name, scheme, tau_c, mhz):
        _, w = _best(name, scheme=scheme, tau_c=tau_c, mhz=mhz)
        return float(w.throughput("N(i)"))

    assert value("TROSY", "2h13c15n", 40e-9, 900.0) > value("HSQC", "2h13c15n", 40e-9, 900.0)
    assert value("TROSY", "15n", 3e-9, 500.0) < value("HSQC", "15n", 3e-9, 500.0)


# ---------------------------------------------------------------------------------------------------------
# Feasibility
# ---------------------------------------------------------------------------------------------------------


def test_cbcaconh_infeasible_when_fully_deuterated(chain):
    # CBCA(CO)NH starts on HA/HB; full deuteration removes them (Grzesiek & Bax, JACS 114, 6291, 1992).
    s = load_scheme("2h13c15n", deuteration=1.0)
    w = walk("CBCA(CO)NH", chain, 3, s, relaxation_rates(15e-9, proton_mhz=800, labeling=s))
    assert not w.feasible and "2H" in w.reason and "HA" in w.reason
    assert all(float(p.throughput) == 0.0 for p in w.peaks)


@pytest.mark.parametrize("level", [0.5, 0.7, 0.98])
def test_cbcaconh_scaled_by_residual_protons(chain, level):
    # Fractional deuteration: only molecules with 1H at HA/HB start the walk, so the start amplitude is the
    # 1H fraction of the site (common practice: fractionally deuterated samples for CBCA(CO)NH-type
    # experiments, Nietlispach et al., J. Am. Chem. Soc. 118, 407, 1996, from memory). The relaxation of the
    # rest is the same deuterated sample's, so throughput / fraction does not depend on a start factor.
    s = load_scheme("2h13c15n", deuteration=level)
    rates = relaxation_rates(15e-9, proton_mhz=800, labeling=s)
    w = walk("CBCA(CO)NH", chain, 3, s, rates)
    assert w.feasible
    assert all(0 < abs(float(p.throughput)) <= 1 - level + 1e-12 for p in w.peaks)


def test_natural_abundance_carbon_is_reported(chain):
    s = load_scheme("15n")
    w = walk("HNCO", chain, 3, s, relaxation_rates(10e-9, proton_mhz=600, labeling=s))
    assert not w.feasible and "natural abundance" in w.reason and "0.0107" in w.reason


def test_proline_at_i_is_infeasible():
    G = build_chain("AKPL")
    s = load_scheme("13c15n")
    for name in ("HSQC", "HNCA", "HNCACB"):
        w = walk(name, G, 3, s, NoRelaxation())
        assert not w.feasible and "proline" in w.reason
        assert all(float(p.throughput) == 0.0 for p in w.peaks)


def test_n_terminal_residue_is_infeasible():
    G = build_chain("MKLA")
    s = load_scheme("13c15n")
    assert "N-terminus" in walk("HSQC", G, 1, s, NoRelaxation()).reason
    assert "N-terminus" in walk("HNCA", G, 1, s, NoRelaxation()).reason


def test_glycine_gives_no_cb_peaks():
    s = load_scheme("13c15n")
    w = walk("HNCACB", build_chain("ALG"), 3, s, NoRelaxation())
    by = {p.label: p for p in w.peaks}
    assert w.feasible and not by["CB(i)"].feasible and "has no CB" in by["CB(i)"].reason
    assert by["CB(i-1)"].feasible and by["CA(i)"].feasible
    w2 = walk("HNCACB", build_chain("AGK"), 3, s, NoRelaxation())
    assert not {p.label: p for p in w2.peaks}["CB(i-1)"].feasible


def test_walk_errors(chain):
    s = load_scheme("13c15n")
    with pytest.raises(BackboneError, match="residue 9 is not in the chain"):
        resolve("HNCA", chain, 9, s)
    other = relaxation_rates(10e-9, proton_mhz=600, labeling=load_scheme("15n"))
    with pytest.raises(BackboneError, match="computed for labeling scheme '15n'"):
        walk("HSQC", chain, 3, s, other)
    with pytest.raises(BackboneError, match="no TROSY version"):
        walk("HSQC", chain, 3, s, NoRelaxation(), trosy=True)
    with pytest.raises(BackboneError, match="objective 'CB"):
        optimize_delays(resolve("HNCA", chain, 3, s), NoRelaxation(), objective="CB(i)")
    with pytest.raises(BackboneError, match="delays lack"):
        walk("HNCA", chain, 3, s, NoRelaxation(), delays={"tau_NH": 0.005})


def test_missing_coherence_is_named(chain):
    # A rate source lacking a coherence the model names gives an error naming the step and the coherence.
    class Partial:
        shape = ()
        labeling = "13c15n"

        def coherence(self, name):
            raise BackboneError(f"unknown coherence {name!r}")

    with pytest.raises(BackboneError, match=r"step 1 \('H to N'\).*'Hx'"):
        walk("HSQC", chain, 3, load_scheme("13c15n"), Partial())
