"""The chain graph: backbone and beta/gamma nuclei as nodes, scalar couplings as edges (networkx).

Nodes
-----
Keys are ``(residue_number, atom)`` with PDB atom names and residue numbers from 1. Per residue:

* ``H`` amide proton (absent for Pro). Residue 1's node stands for the N-terminal NH3+ group, whose protons
  exchange fast with water: it carries ``terminal=True`` (and ``count=3``) and is not observable;
* ``N``, ``CA``, ``C`` (carbonyl C′);
* ``HA``, or ``HA2`` and ``HA3`` for Gly;
* ``CB`` (not Gly) and one representative ``HB`` node whose ``count`` is the number of beta protons
  (3 Ala; 1 Ile, Thr, Val; 2 otherwise);
* one node per gamma carbon (``CG``, or ``CG1``/``CG2`` for Ile and Val, ``CG2`` for Thr), carrying
  ``cg_type`` (aliphatic, aromatic, carbonyl), so the passive CB–CG couplings can be counted.

Node attributes: ``residue`` (int), ``resname`` (one-letter), ``atom``, ``element`` ("H", "C", "N"), ``site``
(labeling site, see the interfaces), ``label`` (``"CA(12)"``), ``count`` (equivalent nuclei the node stands
for) and ``terminal`` (bool).

Edges
-----
Within residue i: N–H, N–CA, CA–C, CA–HA(s), CA–CB, CB–HB, CB–CG(s) and, where a value is known, H–HA (3J from
φ or an override; not for Gly, whose two alpha protons the Karplus sets do not cover, nor for residue 1).
Between residues: N(i)–C(i−1) ``1J(N,C)`` and N(i)–CA(i−1) ``2J(N,CA(i-1))``.

Edge attributes: ``kind``, ``j_hz`` (signed), ``j_range_hz`` (low, high), ``source``, ``nbonds`` and
``residue``: the residue an override is keyed by. That is the residue holding both nuclei, and for the two
inter-residue kinds the later residue i (the one whose N carries the coupling). 3J edges whose value came
from φ also carry ``phi_deg``, and their ``j_range_hz`` is the range of the chosen Karplus curve.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Iterable, Mapping
from functools import lru_cache
from types import MappingProxyType

import networkx as nx
import numpy as np

from backbone.errors import BackboneError
from backbone.graph.couplings import CB_CG_KIND, COUPLINGS, GAMMA_CARBONS, coupling_info
from backbone.graph.karplus import (
    DEFAULT_KARPLUS,
    KarplusSet,
    karplus_set,
    three_j_hn_ha,
    three_j_hn_ha_extrema,
)
from backbone.graph.sequence import parse_sequence

__all__ = [
    "BETA_PROTONS",
    "build_chain",
    "couplings_of",
    "residue_nodes",
    "coupling",
    "two_residue_subgraph",
]

#: Number of beta protons of each residue type (one-letter code); Gly has no CB.
BETA_PROTONS: Mapping[str, int] = MappingProxyType(
    {aa: {"G": 0, "A": 3, "I": 1, "T": 1, "V": 1}.get(aa, 2) for aa in GAMMA_CARBONS}
)

# atom -> (element, labeling site)
_ATOM_CLASS = {
    "H": ("H", "H"),
    "N": ("N", "N"),
    "CA": ("C", "CA"),
    "HA": ("H", "HA"),
    "HA2": ("H", "HA"),
    "HA3": ("H", "HA"),
    "CB": ("C", "CB"),
    "HB": ("H", "HB"),
    "CG": ("C", "CG"),
    "CG1": ("C", "CG"),
    "CG2": ("C", "CG"),
    "C": ("C", "C"),
}
# Every atom name a template can hold, in the order residue_nodes returns them.
_ATOM_ORDER = tuple(_ATOM_CLASS)

_3J = "3J(H,HA)"
_INTER = ("1J(N,C)", "2J(N,CA(i-1))")


@lru_cache(maxsize=None)
def _template(aa: str):
    """Nodes [(atom, extra attrs)] and intra-residue edges [(atom, atom, kind)] of residue type ``aa``."""
    nodes: list[tuple[str, dict]] = []
    edges: list[tuple[str, str, str]] = []
    if aa != "P":
        nodes.append(("H", {}))
        edges.append(("N", "H", "1J(N,H)"))
    nodes += [("N", {}), ("CA", {})]
    edges.append(("N", "CA", "1J(N,CA)"))
    alphas = ("HA2", "HA3") if aa == "G" else ("HA",)
    for ha in alphas:
        nodes.append((ha, {}))
        edges.append(("CA", ha, "1J(CA,HA)"))
    if aa != "G":
        nodes += [("CB", {}), ("HB", {"count": BETA_PROTONS[aa]})]
        edges += [("CA", "CB", "1J(CA,CB)"), ("CB", "HB", "1J(CB,HB)")]
        for cg, cg_type in GAMMA_CARBONS[aa]:
            nodes.append((cg, {"cg_type": cg_type}))
            edges.append(("CB", cg, CB_CG_KIND[cg_type]))
    nodes.append(("C", {}))
    edges.append(("CA", "C", "1J(CA,C)"))
    return tuple(nodes), tuple(edges)


def _has_3j(aa: str, resnum: int) -> bool:
    return resnum > 1 and aa not in ("P", "G")


def _check_value(value, kind: str, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real) or not math.isfinite(float(value)):
        raise BackboneError(f"{where}: {kind} must be a finite number of Hz, got {value!r}")
    value = float(value)
    typical = COUPLINGS[kind].typical_hz
    if value * typical < 0.0:
        why = "couplings to 15N are negative (gamma(15N) < 0)" if typical < 0 else "this coupling is positive"
        raise BackboneError(
            f"{where}: {kind} = {value:g} Hz has the wrong sign; {why}, e.g. {typical:g} Hz"
        )
    return value


def _is_resnum(key) -> bool:
    return isinstance(key, numbers.Integral) and not isinstance(key, bool)


def _read_overrides(overrides, n: int) -> tuple[dict[str, float], dict[int, dict[str, float]]]:
    if overrides is None:
        return {}, {}
    if not isinstance(overrides, Mapping):
        raise BackboneError(
            f"overrides: expected a mapping of coupling kind -> Hz or residue number -> mapping, "
            f"got {type(overrides).__name__}"
        )
    glob: dict[str, float] = {}
    per: dict[int, dict[str, float]] = {}
    for key, value in overrides.items():
        if isinstance(key, str):
            coupling_info(key)
            glob[key] = _check_value(value, key, "overrides")
        elif _is_resnum(key):
            r = int(key)
            if not 1 <= r <= n:
                raise BackboneError(f"overrides: residue {r} is outside the chain (residues 1..{n})")
            if not isinstance(value, Mapping):
                raise BackboneError(
                    f"overrides: residue {r} needs a mapping of coupling kind -> Hz, got {type(value).__name__}"
                )
            per[r] = {}
            for kind, v in value.items():
                coupling_info(kind)
                per[r][kind] = _check_value(v, kind, f"overrides for residue {r}")
        else:
            raise BackboneError(
                f"overrides: key {key!r} is neither a coupling kind (e.g. '1J(N,CA)') nor a residue number"
            )
    return glob, per


def _read_phi(phi_deg, n: int):
    """φ per residue [deg] as an array of length n (NaN = unknown), or None."""
    if phi_deg is None:
        return None
    try:
        phi = np.asarray(phi_deg, dtype=float)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"phi_deg: expected a number or one number per residue, got {phi_deg!r}") from err
    if phi.ndim == 0:
        phi = np.full(n, float(phi))
    elif phi.shape != (n,):
        raise BackboneError(
            f"phi_deg: got {phi.size} values in shape {phi.shape}; give one number or {n} (one per residue)"
        )
    if np.any(np.isinf(phi)):
        bad = int(np.flatnonzero(np.isinf(phi))[0]) + 1
        raise BackboneError(f"phi_deg: residue {bad} has an infinite angle; use NaN for an unknown phi")
    return phi


def _label(resnum: int, atom: str) -> str:
    return f"{atom}({resnum})"


def build_chain(
    sequence: str,
    *,
    overrides: Mapping | None = None,
    phi_deg=None,
    karplus: str | KarplusSet = DEFAULT_KARPLUS,
) -> nx.Graph:
    """Graph of the chain's nuclei and scalar couplings (see the module docstring for nodes and edges).

    Parameters
    ----------
    sequence : str
        One-letter sequence, plain or FASTA (read with :func:`~backbone.graph.sequence.parse_sequence`).
    overrides : mapping, optional
        Coupling values [Hz] replacing the typical ones, with their physical sign. ``{"1J(N,CA)": -10.5}``
        applies to every edge of that kind; ``{5: {"1J(N,CA)": -9.0}}`` to residue 5 only, and wins over a
        global value. Inter-residue kinds (``1J(N,C)``, ``2J(N,CA(i-1))``) are keyed by the later residue i.
        A ``3J(H,HA)`` override (a measured value) creates the H–HA edge even where φ is unknown.
    phi_deg : float or array [deg], optional
        Backbone φ, one value for all residues or one per residue (NaN = unknown), for 3J(H,HA) by the
        Karplus relation. Residue 1 (no φ), Pro (no H) and Gly (two alpha protons) get no 3J edge from φ.
    karplus : str or KarplusSet
        Karplus coefficient set for 3J(H,HA) (default ``"vuister-bax-1993"``).

    Raises
    ------
    BackboneError
        For a bad sequence, an unknown coupling kind or residue number in ``overrides``, a per-residue
        override of a kind that residue does not have, an override that is not a finite number or has the
        wrong sign, a ``phi_deg`` that is not numeric, infinite or of the wrong length, or an unknown
        Karplus set.
    """
    seq = parse_sequence(sequence, where="build_chain")
    n = len(seq)
    glob, per = _read_overrides(overrides, n)
    phi = _read_phi(phi_deg, n)
    kset = karplus_set(karplus)
    j3 = three_j_hn_ha(phi, coefficients=kset) if phi is not None else None
    j3_range = three_j_hn_ha_extrema(kset)

    # Per-residue overrides must name a kind the residue carries.
    for r, kinds in per.items():
        aa = seq[r - 1]
        have = {k for *_, k in _template(aa)[1]}
        if r > 1:
            have.update(_INTER)
        if _has_3j(aa, r):
            have.add(_3J)
        for kind in kinds:
            if kind not in have:
                raise BackboneError(
                    f"overrides for residue {r} ({aa}): it has no {kind} coupling; its kinds: "
                    f"{', '.join(k for k in COUPLINGS if k in have)}"
                )

    typical = {k: (c.typical_hz, c.range_hz, c.source, c.nbonds) for k, c in COUPLINGS.items()}
    glob_src = "user override (all residues)"

    def edge_attrs(kind: str, r: int) -> dict:
        j, rng, src, nb = typical[kind]
        res_over = per.get(r)
        if res_over is not None and kind in res_over:
            j, src = res_over[kind], f"user override (residue {r})"
        elif kind in glob:
            j, src = glob[kind], glob_src
        return {"kind": kind, "j_hz": j, "j_range_hz": rng, "source": src, "nbonds": nb, "residue": r}

    nodes = []
    edges = []
    for r, aa in enumerate(seq, start=1):
        tmpl_nodes, tmpl_edges = _template(aa)
        for atom, extra in tmpl_nodes:
            element, site = _ATOM_CLASS[atom]
            attrs = {
                "residue": r,
                "resname": aa,
                "atom": atom,
                "element": element,
                "site": site,
                "label": _label(r, atom),
                "count": 1,
                "terminal": False,
            }
            attrs.update(extra)
            if r == 1 and atom == "H":
                attrs["terminal"] = True
                attrs["count"] = 3
            nodes.append(((r, atom), attrs))
        for a, b, kind in tmpl_edges:
            edges.append(((r, a), (r, b), edge_attrs(kind, r)))
        if r > 1:
            edges.append(((r, "N"), (r - 1, "C"), edge_attrs("1J(N,C)", r)))
            edges.append(((r, "N"), (r - 1, "CA"), edge_attrs("2J(N,CA(i-1))", r)))
        if _has_3j(aa, r):
            attrs = None
            if _3J in per.get(r, ()) or _3J in glob:
                attrs = edge_attrs(_3J, r)
            elif j3 is not None and not math.isnan(j3[r - 1]):
                attrs = edge_attrs(_3J, r)
                attrs["j_hz"] = float(j3[r - 1])
                attrs["j_range_hz"] = j3_range
                attrs["source"] = f"Karplus relation, {kset.source}"
                attrs["phi_deg"] = float(phi[r - 1])
            if attrs is not None:
                edges.append(((r, "H"), (r, "HA"), attrs))

    G = nx.Graph(sequence=seq, karplus=kset.name)
    G.add_nodes_from(nodes)
    G.add_edges_from(edges)
    return G


# ---------------------------------------------------------------------------------------------------------
# Graph-first helpers
# ---------------------------------------------------------------------------------------------------------


def _node_label(node) -> str:
    try:
        r, atom = node
        return _label(r, atom)
    except (TypeError, ValueError):
        return repr(node)


def _require_node(G: nx.Graph, node) -> None:
    try:
        present = node in G
    except TypeError:
        present = False
    if not present:
        raise BackboneError(
            f"node {_node_label(node)} is not in the chain graph; nodes are (residue number, atom) such as (12, 'CA')"
        )


def couplings_of(G: nx.Graph, node, *, kinds: str | Iterable[str] | None = None) -> list[tuple[tuple, dict]]:
    """Couplings of ``node``: a list of (partner node, edge data), optionally only of the given ``kinds``.

    The edge-data dicts are the graph's own (as networkx returns them); copy before changing them.
    """
    _require_node(G, node)
    if kinds is None:
        wanted = None
    else:
        wanted = {kinds} if isinstance(kinds, str) else set(kinds)
        for kind in wanted:
            coupling_info(kind)
    return [(p, d) for p, d in G.adj[node].items() if wanted is None or d["kind"] in wanted]


def residue_nodes(G: nx.Graph, resnum: int) -> list[tuple[int, str]]:
    """Nodes of residue ``resnum`` in template order (H, N, CA, HA…, CB, HB, CG…, C)."""
    if not _is_resnum(resnum):
        raise BackboneError(f"residue number must be an integer, got {resnum!r}")
    r = int(resnum)
    found = [(r, a) for a in _ATOM_ORDER if (r, a) in G]
    if not found:
        numbers_ = sorted({node[0] for node in G})
        span = f"{numbers_[0]}..{numbers_[-1]}" if numbers_ else "none"
        raise BackboneError(f"residue {r} is not in the chain graph (residues {span})")
    return found


def coupling(G: nx.Graph, a, b) -> float:
    """Signed coupling constant j_hz [Hz] of the edge between nodes ``a`` and ``b``."""
    _require_node(G, a)
    _require_node(G, b)
    if not G.has_edge(a, b):
        raise BackboneError(f"no scalar coupling between {_node_label(a)} and {_node_label(b)} in the chain graph")
    return float(G.edges[a, b]["j_hz"])


def two_residue_subgraph(G: nx.Graph, resnum: int) -> nx.Graph:
    """Independent copy of the subgraph of residues i−1 and i = ``resnum`` with the couplings among them."""
    own = residue_nodes(G, resnum)
    r = int(resnum)
    if not any((r - 1, a) in G for a in _ATOM_ORDER):
        raise BackboneError(f"residue {r} has no preceding residue in the chain graph; give a later residue")
    nodes = residue_nodes(G, r - 1) + own
    H = G.__class__()
    H.graph.update(G.graph)
    H.add_nodes_from((node, dict(G.nodes[node])) for node in nodes)
    H.add_edges_from((u, v, dict(d)) for u, v, d in G.subgraph(nodes).edges(data=True))
    return H
