"""Presentation: JSON documents and readable text tables built from results. No physics, no printing.

Each ``*_document`` function returns the JSON-ready dict of the output contract (``../shared/ARCHITECTURE.md``);
each ``*_table`` function renders such a document as plain text for the terminal.
"""

from __future__ import annotations

import math
import textwrap

__all__ = [
    "CAUTION",
    "rates_document",
    "rates_table",
    "labelings_table",
    "plan_table",
    "experiments_table",
    "verify_document",
    "format_table",
]

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


CAUTION = (
    "Caution: strong magnetic fields and cryogens are hazards around every spectrometer, and long high-power "
    "periods (decoupling, spin locks) heat sample and probe; follow your facility's rules and the probe "
    "maker's power and duty-cycle limits, which override any figure here."
)


def _ms(x) -> str:
    return "-" if x is None else f"{1e3 * x:.2f}"


def plan_table(doc: dict) -> str:
    """Readable text of a ``plan --json`` document (one condition): per experiment its peaks, steps and
    relative sensitivity, and the safety caution at the end."""
    blocks = []
    for e in doc["experiments"]:
        head = (
            f"{e['name']}{' (TROSY)' if e['trosy'] else ''}  labeling {e['labeling']}, 1H {_num(e['field_mhz'])} MHz, "
            f"tau_c {_num(e['tau_c_ns'], 3)} ns"
        )
        if not e["feasible"]:
            blocks.append(f"{head}\n  not feasible: {e['reason']}")
            continue
        lines = [
            head,
            f"  relative sensitivity {_num(e['relative_sensitivity'], 3)} (objective against the 2D 1H-15N HSQC); "
            f"objective: {e.get('objective', '-')}, gain over textbook delays x{_num(e.get('gain'), 3)}",
        ]
        peaks = [
            [p["label"], "+" if p["sign"] > 0 else "-", _num(p["throughput"], 3), _num(p["textbook_throughput"], 3)]
            for p in e["peaks"]
        ]
        lines.append(_indent(format_table(["peak", "sign", "throughput", "at textbook delays"], peaks, align="lcrr")))
        steps = [
            [s["name"], f"{s['from']} -> {s['to']}", _ms(s["delay_s"]), _ms(s["textbook_delay_s"]),
             _num(s["efficiency"], 3), _num(s["rate_s"], 3)]
            for s in e["steps"]
        ]
        lines.append(
            _indent(format_table(["step", "from -> to", "delay ms", "textbook ms", "efficiency", "rate s^-1"], steps, align="llrrrr"))
        )
        blocks.append("\n".join(lines))
    return "\n\n".join(blocks + [textwrap.fill(CAUTION, width=110)])


def _indent(text: str, by: str = "  ") -> str:
    return "\n".join(by + line for line in text.splitlines())


def experiments_table(models) -> str:
    """One line per experiment model: name, walk, recorded nuclei, nuclei it needs labeled, TROSY, peaks."""
    rows = [
        [m.name, m.walk, ",".join(m.dimensions), ",".join(m.needs), "yes" if m.trosy_capable else "no",
         " ".join(p.label for p in m.peaks)]
        for m in models
    ]
    return format_table(["experiment", "walk", "dimensions", "needs labeled", "TROSY", "peaks"], rows, align="llllll")


def verify_document(rows) -> dict:
    """JSON-ready rows of a step-algebra verification (NaN becomes null)."""

    def clean(x):
        return None if isinstance(x, float) and not math.isfinite(x) else x

    return {
        "rows": [
            {
                "kind": r.kind,
                "description": r.description,
                "algebra": clean(r.algebra),
                "reference": clean(r.reference),
                "rel_error": clean(r.rel_error),
                "passed": r.passed,
                "conditions": r.conditions,
            }
            for r in rows
        ],
        "passed": all(r.passed is not False for r in rows),
    }
