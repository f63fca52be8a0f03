"""The chain graph of nuclei and scalar couplings.

* :mod:`~backbone.graph.couplings` – coupling kinds with signed typical values, ranges and sources; which
  residues carry which gamma carbons;
* :mod:`~backbone.graph.karplus` – 3J(HN,HA) from the backbone torsion φ;
* :mod:`~backbone.graph.sequence` – reading sequences (plain or FASTA) and the chain's average mass;
* :mod:`~backbone.graph.chain` – the networkx graph built from a sequence, and helpers to query it.

The chain names are loaded on first use, so code that only needs sequences, masses or coupling values
(``from backbone.graph import residue_mass_da``) does not pay for importing networkx.
"""

from importlib import import_module

from backbone.graph.couplings import CB_CG_KIND, CG_TYPES, COUPLINGS, GAMMA_CARBONS, Coupling, coupling_info
from backbone.graph.karplus import (
    DEFAULT_KARPLUS,
    KARPLUS_HN_HA,
    KarplusSet,
    karplus_set,
    three_j_hn_ha,
    three_j_hn_ha_extrema,
)
from backbone.graph.sequence import (
    AMINO_ACIDS,
    ATOMIC_WEIGHT,
    STANDARD_LETTERS,
    AminoAcid,
    formula_counts,
    formula_mass_da,
    parse_sequence,
    residue_mass_da,
)

__all__ = [
    # couplings
    "Coupling",
    "COUPLINGS",
    "CG_TYPES",
    "CB_CG_KIND",
    "GAMMA_CARBONS",
    "coupling_info",
    # karplus
    "KarplusSet",
    "KARPLUS_HN_HA",
    "DEFAULT_KARPLUS",
    "karplus_set",
    "three_j_hn_ha",
    "three_j_hn_ha_extrema",
    # sequence
    "AminoAcid",
    "AMINO_ACIDS",
    "STANDARD_LETTERS",
    "ATOMIC_WEIGHT",
    "formula_counts",
    "formula_mass_da",
    "parse_sequence",
    "residue_mass_da",
    # chain
    "BETA_PROTONS",
    "build_chain",
    "couplings_of",
    "residue_nodes",
    "coupling",
    "two_residue_subgraph",
]

_LAZY = {
    name: "backbone.graph.chain"
    for name in ("BETA_PROTONS", "build_chain", "couplings_of", "residue_nodes", "coupling", "two_residue_subgraph")
}


def __getattr__(name):
    try:
        module = _LAZY[name]
    except KeyError:
        raise AttributeError(f"module 'backbone.graph' has no attribute {name!r}") from None
    value = getattr(import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
