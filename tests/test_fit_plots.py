"""Figures of fit results (backbone.fitting.plots): formats, whole-or-nothing writing, no silent overwrite.

File signatures (magic bytes) are those of the format specifications: PNG starts with 89 50 4E 47 0D 0A 1A 0A
(W3C, Portable Network Graphics Specification, 2nd ed., 2003, section 5.2); PDF with "%PDF-" (ISO 32000-1:2008,
section 7.5.2); SVG is XML with an <svg> root element (W3C, SVG 1.1, 2011).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from backbone.errors import BackboneError
from backbone.fitting import fit_buildups, fit_decays, fit_ratio, fit_tau_c, plot_fits, plot_result, plot_tau_c
from backbone.labeling import load_scheme
from backbone.relaxation import relaxation_rates

DELAYS = np.array([0.01, 0.03, 0.05, 0.08, 0.12, 0.16])


def _decays(n=6, seed=0):
    """Invented decays (seeded), one constant series and one with two points."""
    rng = np.random.default_rng(seed)
    rows = []
    for r in range(1, n + 1):
        y = 1e5 * np.exp(-(10 + 2 * r) * DELAYS) + rng.normal(0, 5e2, DELAYS.size)
        rows += [(r, t, v) for t, v in zip(DELAYS, y)]
    rows += [(50, t, 7.0) for t in DELAYS] + [(51, 0.01, 3.0), (51, 0.02, 2.0)]
    return pd.DataFrame(rows, columns=["residue", "delay_s", "intensity"])


def _magic(path):
    head = path.read_bytes()[:400]
    if path.suffix == ".png":
        return head.startswith(b"\x89PNG\r\n\x1a\n")
    if path.suffix == ".pdf":
        return head.startswith(b"%PDF-")
    return b"<svg" in head or b"<?xml" in head


@pytest.mark.parametrize("suffix", [".png", ".svg", ".pdf"])
def test_fit_figures_in_every_format(tmp_path, suffix):
    result = fit_decays(_decays())
    out = plot_fits(result, path=tmp_path / f"fits{suffix}")
    assert _magic(out)
    assert [p.name for p in tmp_path.iterdir()] == [f"fits{suffix}"]  # no temporary file left


def test_many_residues_are_summarized_and_buildups_drawn(tmp_path):
    result = fit_decays(_decays(n=30))
    assert _magic(plot_fits(result, path=tmp_path / "many.png", max_panels=8))
    t = np.linspace(0.5e-3, 16e-3, 10)
    frame = pd.DataFrame({"residue": 1, "delay_s": t, "intensity": 1e5 * np.sin(np.pi * 92 * t) * np.exp(-20 * t)})
    assert _magic(plot_result(fit_buildups(frame, j_hz=92.0), tmp_path / "bu.svg"))


def test_refuses_to_overwrite_without_force(tmp_path):
    result = fit_decays(_decays())
    path = tmp_path / "fits.png"
    path.write_bytes(b"keep me")
    with pytest.raises(BackboneError, match="exists; not overwriting"):
        plot_fits(result, path=path)
    assert path.read_bytes() == b"keep me"
    plot_fits(result, path=path, force=True)
    assert _magic(path)


def test_nothing_is_written_on_failure(tmp_path):
    result = fit_decays(_decays())
    with pytest.raises(BackboneError, match="unknown figure format '.jpg'"):
        plot_fits(result, path=tmp_path / "fits.jpg")
    with pytest.raises(BackboneError, match="does not exist"):
        plot_fits(result, path=tmp_path / "absent" / "fits.png")
    with pytest.raises(BackboneError, match="max_panels"):
        plot_fits(result, path=tmp_path / "fits.png", max_panels=0)
    with pytest.raises(BackboneError, match="plot_tau_c draws"):
        plot_tau_c(result, tmp_path / "tau.png")
    assert list(tmp_path.iterdir()) == []


def test_tau_c_and_ratio_figures(tmp_path):
    # Rates from the package engine at 10 ns (a fixture for drawing, not a reference).
    rs = relaxation_rates(10e-9, proton_mhz=600.0, labeling=load_scheme("15n"))["N"]
    rng = np.random.default_rng(3)
    n = 12
    frame = pd.DataFrame({"residue": np.arange(1, n + 1),
                          "R1": rs["R1"] * (1 + rng.normal(0, 0.02, n)), "R2": rs["R2"] * (1 + rng.normal(0, 0.02, n))})
    fit = fit_tau_c(frame, proton_mhz=600.0, labeling="15n", expected_tau_c=10e-9)
    assert _magic(plot_tau_c(fit, tmp_path / "tau.pdf"))
    ratio = pd.DataFrame({"residue": [1, 2, 3, 1, 2, 3], "experiment": ["TROSY"] * 3 + ["HSQC"] * 3,
                          "intensity": [120, 130, 125, 100, 100, 100]})
    rfit = fit_ratio(ratio, field_mhz=800.0, labeling="2h13c15n", scale=1.0, expected_tau_c=15e-9)
    assert _magic(plot_result(rfit, tmp_path / "ratio.png"))
