"""Properties of the rate engine over the whole valid range (hypothesis)."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from backbone.constants import CSATensor
from backbone.labeling import registered_schemes
from backbone.relaxation import relaxation_rates

SCHEMES = registered_schemes()
_SETTINGS = settings(max_examples=60, deadline=None)


# tau_c log-uniform over the valid 0.1-500 ns, field over 100-1500 MHz (backbone.units).
def _log_uniform(low, high):
    return st.floats(np.log(low), np.log(high)).map(lambda x: float(np.clip(np.exp(x), low, high)))


tau_c = _log_uniform(0.1e-9, 500e-9)
field = st.floats(100.0, 1500.0)
scheme = st.sampled_from(sorted(SCHEMES)).map(SCHEMES.get)
geometry = st.sampled_from(["typical", "helix", "sheet"])
order = st.floats(0.0, 1.0)
internal = st.floats(0.0, 10e-9)


@_SETTINGS
@given(tau_c=tau_c, mhz=field, labeling=scheme, env=geometry, s2=order, tau_e=internal)
def test_every_rate_finite_and_positive(tau_c, mhz, labeling, env, s2, tau_e):
    # Auto-relaxation rates are positive definite (Abragam 1961, ch. VIII); the NOE is a ratio and may be < 0.
    rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=labeling, environment=env, s2=max(s2, 1e-3), tau_e=tau_e)
    for nucleus, named in rates.nuclei.items():
        for key, value in named.items():
            assert np.isfinite(value), (nucleus, key)
            if key != "NOE":
                assert value > 0, (nucleus, key, float(value))
    for name, value in rates.coherences.items():
        assert np.isfinite(value) and value > 0, name


@_SETTINGS
@given(tau_c=tau_c, mhz=field, labeling=scheme, s2=order, tau_e=internal, step=st.floats(1.01, 3.0))
def test_transverse_rates_grow_with_tau_c(tau_c, mhz, labeling, s2, tau_e, step):
    # Slower tumbling always broadens lines: every R2 rises with tau_c (J(0) = (2/5) tau_c dominates the
    # transverse expressions; Abragam 1961; Lipari & Szabo 1982).
    tau_c = min(tau_c, 499e-9 / step)
    s2 = max(s2, 1e-3)
    slow_fast = relaxation_rates(np.array([tau_c, tau_c * step]), proton_mhz=mhz, labeling=labeling, s2=s2, tau_e=tau_e)
    for nucleus, named in slow_fast.nuclei.items():
        r2 = named["R2"]
        assert r2[1] > r2[0], nucleus
    # In-phase and multiple-quantum coherences only (plus 2NxHz, whose added proton rho also grows with J(0)):
    # a coherence anti-phase to a heteronucleus carries that partner's R1, which falls with tau_c, and in
    # deuterated samples at some fields (e.g. 2CAxCz above 850 MHz and below 10 ns) it can fall overall.
    for name in ("Nx", "2NxHz", "Nx_hdec", "Hx", "2HxNx", "CAx", "Cx", "CBx"):
        if name in slow_fast.coherences:
            r = slow_fast.coherences[name]
            assert r[1] > r[0], name


@_SETTINGS
@given(tau_c=tau_c, mhz=field, labeling=scheme, env=geometry, angle=st.floats(0.0, 90.0), s2=order)
def test_trosy_component_never_slower_than_decoupled_mean(tau_c, mhz, labeling, env, angle, s2):
    # The doublet components relax at the in-phase/anti-phase mean -/+ |eta_xy| (Goldman 1984), for any geometry.
    tensor = CSATensor("15N", "test", delta=-160e-6, angle_deg=angle)
    rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=labeling, environment=env, n_csa=tensor, s2=max(s2, 1e-3))
    n = rates["N"]
    assert n["R2_trosy"] <= rates.coherences["Nx_hdec"] <= n["R2_antitrosy"]
    assert rates["H"]["R2_trosy"] <= rates["H"]["R2_antitrosy"]


@_SETTINGS
@given(
    tau_c=_log_uniform(2e-9, 500e-9),
    mhz=st.floats(500.0, 1500.0),
    labeling=scheme,
    env=geometry,
    angle=st.floats(0.0, 30.0),
    s2=st.floats(0.5, 1.0),
    tau_e=st.floats(0.0, 1e-9),
)
def test_trosy_below_in_phase_in_documented_range(tau_c, mhz, labeling, env, angle, s2, tau_e):
    # Within the range documented in relaxation_rates (tau_c >= 2 ns, >= 500 MHz, CSA angle 0-30 deg,
    # S2 0.5-1) the TROSY component of 15N and of 1HN relaxes slower than the in-phase coherence
    # (Pervushin, Riek, Wider & Wuthrich, PNAS 94, 12366, 1997).
    rates = relaxation_rates(
        tau_c,
        proton_mhz=mhz,
        labeling=labeling,
        environment=env,
        s2=s2,
        tau_e=tau_e,
        n_csa=CSATensor("15N", "test", delta=-160e-6, angle_deg=angle),
        h_csa=CSATensor("1HN", "test", delta=15e-6, angle_deg=angle),
    )
    assert rates["N"]["R2_trosy"] <= rates["N"]["R2"]
    assert rates["H"]["R2_trosy"] <= rates["H"]["R2"]
