"""Protein sequences: reading them (plain one-letter text or FASTA) and their average molecular mass.

Only the 20 standard amino acids are modeled. The average mass is computed from the elemental formula of
each residue (amino acid minus water) and the conventional standard atomic weights, never from re-typed
residue masses, so changing an atomic weight changes every mass consistently.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from backbone.constants import Constant
from backbone.errors import BackboneError

__all__ = [
    "AminoAcid",
    "AMINO_ACIDS",
    "STANDARD_LETTERS",
    "ATOMIC_WEIGHT",
    "formula_counts",
    "formula_mass_da",
    "parse_sequence",
    "residue_mass_da",
]

_CIAAW = (
    "CIAAW conventional atomic weight; Meija et al., Atomic weights of the elements 2013 (IUPAC Technical "
    "Report), Pure Appl. Chem. 88, 265-291 (2016), Table 3 (from memory)"
)

#: Conventional standard atomic weights [Da per atom, i.e. g mol^-1] of the elements in proteins.
ATOMIC_WEIGHT: Mapping[str, Constant] = MappingProxyType(
    {
        "H": Constant("atomic weight H", 1.008, "Da", _CIAAW),
        "C": Constant("atomic weight C", 12.011, "Da", _CIAAW),
        "N": Constant("atomic weight N", 14.007, "Da", _CIAAW),
        "O": Constant("atomic weight O", 15.999, "Da", _CIAAW),
        "S": Constant("atomic weight S", 32.06, "Da", _CIAAW),
    }
)


@dataclass(frozen=True)
class AminoAcid:
    """A standard amino acid: one- and three-letter codes, name and the formula of its residue in a chain."""

    code: str
    three: str
    name: str
    residue_formula: str


_TABLE = (
    AminoAcid("A", "ALA", "alanine", "C3H5NO"),
    AminoAcid("R", "ARG", "arginine", "C6H12N4O"),
    AminoAcid("N", "ASN", "asparagine", "C4H6N2O2"),
    AminoAcid("D", "ASP", "aspartic acid", "C4H5NO3"),
    AminoAcid("C", "CYS", "cysteine", "C3H5NOS"),
    AminoAcid("Q", "GLN", "glutamine", "C5H8N2O2"),
    AminoAcid("E", "GLU", "glutamic acid", "C5H7NO3"),
    AminoAcid("G", "GLY", "glycine", "C2H3NO"),
    AminoAcid("H", "HIS", "histidine", "C6H7N3O"),
    AminoAcid("I", "ILE", "isoleucine", "C6H11NO"),
    AminoAcid("L", "LEU", "leucine", "C6H11NO"),
    AminoAcid("K", "LYS", "lysine", "C6H12N2O"),
    AminoAcid("M", "MET", "methionine", "C5H9NOS"),
    AminoAcid("F", "PHE", "phenylalanine", "C9H9NO"),
    AminoAcid("P", "PRO", "proline", "C5H7NO"),
    AminoAcid("S", "SER", "serine", "C3H5NO2"),
    AminoAcid("T", "THR", "threonine", "C4H7NO2"),
    AminoAcid("W", "TRP", "tryptophan", "C11H10N2O"),
    AminoAcid("Y", "TYR", "tyrosine", "C9H9NO2"),
    AminoAcid("V", "VAL", "valine", "C5H9NO"),
)

#: The 20 standard amino acids by one-letter code (formulas are residues: amino acid minus H2O).
AMINO_ACIDS: Mapping[str, AminoAcid] = MappingProxyType({a.code: a for a in _TABLE})

#: The allowed one-letter codes, alphabetical.
STANDARD_LETTERS = "".join(sorted(AMINO_ACIDS))

_WATER = "H2O"
_FORMULA_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)")


def formula_counts(formula: str) -> dict[str, int]:
    """Element counts of a simple formula such as ``"C6H12N4O"`` (no brackets or charges)."""
    counts: Counter[str] = Counter()
    pos = 0
    for m in _FORMULA_TOKEN.finditer(formula):
        if m.start() != pos or m.end() == m.start():
            break
        counts[m.group(1)] += int(m.group(2) or 1)
        pos = m.end()
    if pos != len(formula) or not formula:
        raise BackboneError(f"formula {formula!r} is not a plain element formula such as 'C6H12N4O'")
    unknown = sorted(set(counts) - set(ATOMIC_WEIGHT))
    if unknown:
        raise BackboneError(
            f"formula {formula!r}: element {unknown[0]!r} has no atomic weight here; known: "
            f"{', '.join(ATOMIC_WEIGHT)}"
        )
    return dict(counts)


def formula_mass_da(formula: str) -> float:
    """Average mass [Da] of a molecule or residue of elemental ``formula`` with natural isotope abundances."""
    return sum(n * ATOMIC_WEIGHT[el].value for el, n in formula_counts(formula).items())


_RESIDUE_MASS_DA = {code: formula_mass_da(a.residue_formula) for code, a in AMINO_ACIDS.items()}
_WATER_MASS_DA = formula_mass_da(_WATER)
_NOT_MODELED = "BJOUXZ"


def _bad_character(where: str, ch: str, residue: int, line: int, column: int) -> BackboneError:
    what = "letter" if ch.isalpha() else "character"
    hint = " (ambiguous and non-standard codes B, J, O, U, X, Z are not modeled)" if ch.upper() in _NOT_MODELED else ""
    return BackboneError(
        f"{where}: {what} {ch!r} at residue {residue} (line {line}, column {column}) is not a standard amino "
        f"acid{hint}; allowed letters: {STANDARD_LETTERS}"
    )


def parse_sequence(text: str, *, where: str = "sequence") -> str:
    """Read a protein sequence and return it as upper-case one-letter codes.

    Accepted input
    --------------
    * plain one-letter text; whitespace, line breaks and digits (position numbers) are ignored and lower case
      is accepted;
    * FASTA: one record, i.e. one or more consecutive header lines starting with ``>`` followed by sequence
      lines. A header after sequence lines starts a second record, which is an error. Blank lines are ignored.

    One ``*`` at the very end (a stop marker common in FASTA files) is accepted and dropped.

    Raises
    ------
    BackboneError
        ``where`` prefixes the message. Raised for a character that is not one of the 20 standard one-letter
        codes (the message names it, its residue number, line and column and lists the allowed letters), for
        more than one FASTA record, for text before the FASTA header, and for an empty sequence.
    """
    if not isinstance(text, str):
        raise BackboneError(f"{where}: expected the sequence as text, got {type(text).__name__}")
    lines = text.splitlines()
    is_fasta = any(line.lstrip().startswith(">") for line in lines)
    body: list[tuple[int, str]] = []
    header_seen = False
    for number, line in enumerate(lines, start=1):
        stripped = line.strip()
        if is_fasta and stripped.startswith(">"):
            if any(chunk.strip() for _, chunk in body):
                raise BackboneError(
                    f"{where}: a second FASTA record starts at line {number}; exactly one record is allowed"
                )
            header_seen = True
            continue
        if is_fasta and not header_seen and stripped:
            raise BackboneError(f"{where}: line {number} holds text before the FASTA header line ('>')")
        body.append((number, line))

    letters: list[str] = []
    stop: tuple[int, int] | None = None
    for number, line in body:
        for column, ch in enumerate(line, start=1):
            if ch.isspace() or ch.isdigit():
                continue
            if stop is not None:
                raise _bad_character(where, "*", len(letters) + 1, *stop)
            up = ch.upper()
            if up in _RESIDUE_MASS_DA:
                letters.append(up)
            elif ch == "*":
                stop = (number, column)
            else:
                raise _bad_character(where, ch, len(letters) + 1, number, column)
    if not letters:
        raise BackboneError(f"{where}: the sequence is empty (no one-letter codes found)")
    return "".join(letters)


def residue_mass_da(sequence: str) -> float:
    """Average molecular mass [Da] of the chain: sum of residue masses plus one water.

    ``sequence`` is read with :func:`parse_sequence` (plain or FASTA). Natural isotope abundances, neutral
    residues, free cysteines (no disulfides), no labeling shifts.
    """
    seq = parse_sequence(sequence, where="residue_mass_da")
    return sum(n * _RESIDUE_MASS_DA[aa] for aa, n in Counter(seq).items()) + _WATER_MASS_DA
