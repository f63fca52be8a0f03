"""Plots: files in the format of their extension, written whole or not at all, never overwritten silently.

The frames here are small hand-made tables in the sweep layout: they exercise the drawing and the file
handling, not the physics (the sweep itself is tested in test_sweep.py against plan()).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from backbone.errors import BackboneError
from backbone.plots import plot_delays_vs_tau_c, plot_throughput_vs_tau_c, plot_walk, walk_layout
from backbone.sweep import SWEEP_COLUMNS

# File signatures: PNG (ISO/IEC 15948, 8-byte signature), PDF (ISO 32000, "%PDF-"), SVG (W3C SVG 1.1, an XML
# document whose root element is <svg>).
MAGIC = {".png": b"\x89PNG\r\n\x1a\n", ".pdf": b"%PDF-"}


def _is_format(path, ext):
    data = path.read_bytes()
    if ext == ".svg":
        return b"<svg" in data[:2000]
    return data.startswith(MAGIC[ext])


@pytest.fixture(scope="module")
def frame():
    tau = np.geomspace(2.0, 40.0, 6)
    rows = []
    for lab in ("13c15n", "2h13c15n"):
        for trosy in (False,):
            for name in ("HNCA",):
                for t in tau:
                    rows.append(
                        {
                            "experiment": name, "trosy": trosy, "labeling": lab, "deuteration": np.nan,
                            "field_mhz": 800.0, "tau_c_ns": t, "objective": "weakest",
                            "objective_throughput": np.exp(-t / (10.0 if lab == "2h13c15n" else 5.0)) / (2 if trosy else 1),
                            "textbook_objective_throughput": 0.1, "relative_sensitivity": 0.2, "feasible": True,
                            "reason": "", "delay_tau_NH_ms": 5.0 - 0.01 * t, "textbook_delay_tau_NH_ms": 5.4,
                        }
                    )
    f = pd.DataFrame(rows)
    assert set(SWEEP_COLUMNS) <= set(f.columns)
    return f


@pytest.mark.parametrize("ext", [".png", ".svg", ".pdf"])
def test_throughput_plot_formats(frame, tmp_path, ext):
    out = plot_throughput_vs_tau_c(
        frame, tmp_path / f"t{ext}", scenario_tau_c_ns=15.0,
        crossovers=[{"kind": "deuteration", "experiment": "HNCA", "field_mhz": 800.0, "tau_c_ns": 9.0}],
    )
    assert _is_format(out, ext)
    assert [p.name for p in tmp_path.iterdir()] == [f"t{ext}"]


def test_delay_plot(frame, tmp_path):
    out = plot_delays_vs_tau_c(frame, tmp_path / "d.png", labeling="13c15n", field_mhz=800.0)
    assert _is_format(out, ".png")
    with pytest.raises(BackboneError, match="no feasible rows"):
        plot_delays_vs_tau_c(frame, tmp_path / "e.png", labeling="15n")
    assert not (tmp_path / "e.png").exists()


def test_walk_plot(tmp_path):
    out = plot_walk("HNCA", tmp_path / "w.svg", tau_c_ns=15.0, field_mhz=800.0, labeling="2h13c15n", trosy=True)
    assert _is_format(out, ".svg")


def test_walk_layout_backbone_on_a_line():
    from backbone.experiments import typical_chain
    from backbone.graph import two_residue_subgraph

    H = two_residue_subgraph(typical_chain(), 3)
    pos = walk_layout(H, 3)
    line = [pos[(r, a)] for r in (2, 3) for a in ("N", "CA", "C")]
    assert all(y == 0.0 for _, y in line) and [x for x, _ in line] == sorted(x for x, _ in line)
    assert pos[(3, "H")][1] > 0 and pos[(3, "CB")][1] < 0
    assert len(set(pos.values())) == len(pos)  # no two nuclei on top of each other


def test_refuses_to_overwrite(frame, tmp_path):
    target = tmp_path / "t.png"
    target.write_bytes(b"keep")
    with pytest.raises(BackboneError, match="t.png.*exists"):
        plot_throughput_vs_tau_c(frame, target)
    with pytest.raises(BackboneError, match="t.png.*exists"):
        plot_walk("HNCA", target, tau_c_ns=10.0, field_mhz=600.0)
    assert target.read_bytes() == b"keep"
    plot_throughput_vs_tau_c(frame, target, force=True)
    assert _is_format(target, ".png")


def test_nothing_written_on_failure(frame, tmp_path, monkeypatch):
    with pytest.raises(BackboneError, match=r"\.png.*\.svg.*\.pdf"):
        plot_throughput_vs_tau_c(frame, tmp_path / "t.jpg")
    with pytest.raises(BackboneError, match="lacks columns"):
        plot_throughput_vs_tau_c(frame.drop(columns=["tau_c_ns"]), tmp_path / "t.png")
    with pytest.raises(BackboneError, match="quantity"):
        plot_throughput_vs_tau_c(frame, tmp_path / "t.png", quantity="volume")
    with pytest.raises(BackboneError, match="nothing to draw"):
        plot_throughput_vs_tau_c(frame, tmp_path / "t.png", experiments=["HNCACB"])
    # Proline has no amide proton, so an amide-detected walk on it is infeasible (a fact of the trade).
    with pytest.raises(BackboneError, match="infeasible.*proline"):
        plot_walk("HNCA", tmp_path / "w.png", tau_c_ns=10.0, field_mhz=600.0, sequence="MKPAL", residue=3)
    with pytest.raises(BackboneError, match="conditions"):
        plot_walk("HNCA", tmp_path / "w.png")
    with pytest.raises(BackboneError, match="delays"):
        plot_walk("HNCA", tmp_path / "w.png", tau_c_ns=10.0, field_mhz=600.0, delays="best")
    with pytest.raises(BackboneError, match="sequence"):
        plot_walk("HNCA", tmp_path / "w.png", tau_c_ns=10.0, field_mhz=600.0, residue=7)
    with pytest.raises(BackboneError, match="residue number"):
        plot_walk("HNCA", tmp_path / "w.png", tau_c_ns=10.0, field_mhz=600.0, sequence="MKTAYIAK")

    from matplotlib.figure import Figure

    def broken(self, fname, **kwargs):
        with open(fname, "wb") as fh:
            fh.write(b"\x89PNG half")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(Figure, "savefig", broken)
    with pytest.raises(BackboneError, match="could not be written"):
        plot_throughput_vs_tau_c(frame, tmp_path / "t.png")
    assert not list(tmp_path.iterdir())


def test_throughput_figure_layout(frame):
    # Readability of the figure: the legend lies outside every panel, crossovers are markers without text on the
    # axes, the scenario's tau_c is a vertical line, and the crossovers are listed in a table under the panels.
    from matplotlib.table import Table

    from backbone.plots import _throughput_figure

    frame = frame.assign(field_mhz=800.0)
    two = pd.concat([frame, frame.assign(field_mhz=900.0)], ignore_index=True)
    fig = _throughput_figure(
        two, scenario_tau_c_ns=15.0,
        crossovers=[{"kind": "deuteration", "experiment": "HNCA", "field_mhz": f, "tau_c_ns": 9.0} for f in (800.0, 900.0)],
    )
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    panels = [ax for ax in fig.axes if ax.get_xscale() == "log"]
    assert len(panels) == 2
    legend = panels[-1].get_legend()
    box = legend.get_window_extent(renderer)
    assert all(not box.overlaps(ax.get_window_extent(renderer)) for ax in panels)
    for ax in panels:
        assert not ax.texts  # no text labels on the axes
        markers = [ln for ln in ax.lines if ln.get_marker() == "o" and ln.get_linestyle() == "None"]
        assert len(markers) == 1 and markers[0].get_xdata()[0] == 9.0
        assert any(list(ln.get_xdata()) == [15.0, 15.0] for ln in ax.lines)  # axvline
        # One color per experiment, one line style per labeling.
        curves = [ln for ln in ax.lines if ln.get_linestyle() not in ("None",) and len(ln.get_xdata()) > 2]
        assert len({ln.get_color() for ln in curves}) == 1 and len({ln.get_linestyle() for ln in curves}) == 2
    assert any(isinstance(c, Table) for ax in fig.axes for c in ax.get_children())
    # Without the per-time column the default quantity is the objective throughput.
    assert panels[0].get_ylabel().startswith("objective throughput")
