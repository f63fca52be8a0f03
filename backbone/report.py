"""Presentation: JSON documents and readable text tables built from results. No physics, no printing.

Each ``*_document`` function returns the JSON-ready dict of the output contract (``../shared/ARCHITECTURE.md``);
each ``*_table`` function renders such a document as plain text for the terminal.
"""

from __future__ import annotations

import math

__all__ = ["rates_document", "rates_table", "labelings_table", "format_table"]

_NUCLEUS_NAMES = {
    "H": "1HN (amide)",
    "N": "15N (amide)",
    "CA": "13C alpha",
    "HA": "1H alpha",
    "C": "13C' (carbonyl)",
    "CB": "13C beta",
}


def _num(x, digits: int = 4) -> str:
    if x is None:
        return "-"
    if isinstance(x, str):
        return x
    if not math.isfinite(x):
        return str(x)
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


def format_table(header: list[str], rows: list[list[str]], *, align: str | None = None) -> str:
    """Monospace table: columns padded to their widest cell; ``align`` is a string of 'l'/'r' per column."""
    align = align or "l" + "r" * (len(header) - 1)
    widths = [max(len(str(c)) for c in col) for col in zip(header, *rows)]

    def line(cells):
        out = []
        for cell, w, a in zip(cells, widths, align):
            out.append(str(cell).ljust(w) if a == "l" else str(cell).rjust(w))
        return "  ".join(out).rstrip()

    return "\n".join([line(header), line(["-" * w for w in widths])] + [line(r) for r in rows])


def rates_document(conditions, rates) -> dict:
    """The ``backbone rates --json`` document: ``conditions``, ``rates``, ``coherences``, ``unlabeled``."""
    doc = rates.as_dict()
    cond = conditions.as_dict()
    cond.update({k: v for k, v in doc["conditions"].items() if k not in cond})
    return {
        "conditions": cond,
        "rates": doc["rates"],
        "coherences": doc["coherences"],
        "unlabeled": doc["unlabeled"],
    }


def rates_table(doc: dict) -> str:
    """Readable text of a :func:`rates_document`."""
    c = doc["conditions"]
    lines = [
        f"tau_c {c['tau_c_ns']:.3g} ns ({c['tau_c_source']}), 1H {c['field_mhz']:g} MHz, "
        f"{c['temperature_k']:.2f} K in {c['solvent']}, labeling {c['labeling']}"
        + (f" (deuteration {c['deuteration']:.2f})" if c.get("deuteration") is not None else "")
        + f", {c['spectral_density']} spectral density"
        + (f" (S2 {c['s2']:g}, tau_e {c['tau_e_ns']:g} ns)" if c["spectral_density"] == "model-free" else ""),
        "",
    ]
    columns = ["R1", "R1_selective", "R2", "R2_trosy", "R2_antitrosy", "eta_xy", "NOE"]
    present = [k for k in columns if any(k in r for r in doc["rates"].values())]
    rows = []
    for nucleus, r in doc["rates"].items():
        rows.append([_NUCLEUS_NAMES.get(nucleus, nucleus)] + [_num(r.get(k)) for k in present])
    lines.append(format_table(["nucleus (rates in s^-1)"] + present, rows))
    lines.append("")
    rows = [[name, _num(v)] for name, v in doc["coherences"].items()]
    lines.append(format_table(["coherence", "rate s^-1"], rows))
    if doc["unlabeled"]:
        lines.append("")
        lines.append(
            "not labeled (no rates): "
            + ", ".join(f"{_NUCLEUS_NAMES.get(n, n)} at {100 * f:.3g} % magnetic isotope" for n, f in doc["unlabeled"].items())
        )
    return "\n".join(lines)


def labelings_table(schemes) -> str:
    """One line per labeling scheme: id, name, deuteration."""
    rows = []
    for s in schemes:
        deut = "-" if s.deuteration is None else f"{s.deuteration:.2f}" + (" (adjustable)" if s.deuteration_adjustable else "")
        rows.append([s.id, s.name, deut])
    return format_table(["id", "name", "deuteration"], rows, align="lll")
