"""Experiment models: frozen, self-validating records read from declarative TOML, and their registry.

An experiment model says, in the terms of the trade, what a pulse sequence does to the magnetization: where it
starts (the amide proton, or carbon-bound protons), the ordered transfer and evolution periods with the atoms
they join (``CA(i)``, ``CA(i-1)``), the scalar couplings that are active, passive or decoupled in each, the
coherences whose relaxation rates apply, the named delays (tied steps share a name), and the peaks with the
branch each takes where the magnetization splits. The file format is documented, with a full example, in
``models/experiments/README.md``; the bundled models live in that folder and a user may load their own file by
path (:func:`load_experiment`), which goes through the same validation and messages.

Validation happens on construction, level by level (:class:`Atom`, :class:`Step`, :class:`Peak`,
:class:`ExperimentModel`); every message names the file, the step (by name and index) or peak, and the key, and
unknown keys are rejected with the closest valid suggestion. Coupling kinds are checked against the graph's
coupling table (:data:`backbone.graph.COUPLINGS`) and against the atoms the step joins; coherence names against
the relaxation engine's :data:`~backbone.relaxation.COHERENCES`.
Every peak's pathway is traced through the steps at load time, so a peak that references a missing branch, or
a step that cannot follow from where the magnetization is, is reported before anything is computed.

Public API
----------
``Atom``, ``Step``, ``Peak``, ``ExperimentModel``, ``load_experiment``, ``registered_experiments``,
``experiment_from_dict``, and the vocabularies ``STEP_KINDS``, ``EVOLUTION_MODES``, ``WALKS``, ``OBJECTIVES``,
``known_coherences``.
"""

from __future__ import annotations

import difflib
import functools
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType

from backbone.errors import BackboneError
from backbone.tomlfile import read_toml
from backbone.graph.couplings import COUPLINGS
from backbone.labeling.scheme import SITES
from backbone.resources import models_dir

__all__ = [
    "STEP_KINDS",
    "EVOLUTION_MODES",
    "WALKS",
    "OBJECTIVES",
    "known_coherences",
    "Atom",
    "Step",
    "Peak",
    "Segment",
    "ExperimentModel",
    "coherence_for",
    "experiment_from_dict",
    "load_experiment",
    "registered_experiments",
]

#: Step kinds and what they do (the README has the full description).
STEP_KINDS = MappingProxyType(
    {
        "inept": "one period: the `from` spin goes in-phase -> anti-phase to `to`; pulses then move it to `to`",
        "transfer": "as inept, to one or several partners at once (branches, e.g. N -> CA(i), CA(i-1))",
        "refocus": "one period: the coherence on `to`, anti-phase to `from`, refocuses to in-phase",
        "carbon-split": "carbon-carbon period(s) splitting CA and CB pathways (HNCACB, CBCA(CO)NH type)",
        "shift-evolution": "chemical-shift evolution of one nucleus: real-time, constant-time or semi-constant-time",
        "multiple-quantum": "heteronuclear multiple-quantum period (no evolution under the pair's coupling)",
        "sensitivity-enhancement": "second refocusing period that keeps both orthogonal components (sqrt 2 in S/N)",
        "detect": "direct acquisition",
    }
)
EVOLUTION_MODES = ("real-time", "constant-time", "semi-constant-time")
WALKS = ("out-and-back", "straight-through")
#: Objective names besides a peak label.
OBJECTIVES = ("weakest", "geometric-mean")

def known_coherences() -> tuple[str, ...]:
    """Coherence names a model may use: those the relaxation engine computes (its ``COHERENCES``)."""
    from backbone.relaxation.engine import COHERENCES

    return tuple(COHERENCES)


# Atom names a step may use (PDB names; HA stands for HA2 of Gly, HB for the beta protons, CG for any gamma C).
_ATOMS = ("H", "N", "CA", "HA", "C", "CB", "HB", "CG")
_ATOM_SITE = {"H": "H", "N": "N", "CA": "CA", "HA": "HA", "C": "C", "CB": "CB", "HB": "HB", "CG": "CG"}
_ATOM_RE = re.compile(r"^\s*([A-Z]+)\s*(?:\(\s*i\s*(?:([+-])\s*(\d+))?\s*\))?\s*$")
# Transverse nucleus of a coherence name: 2CAxNz -> CA, Nx_hdec -> N, H_trosy -> H, HBx -> HB.
_TRANSVERSE_RE = re.compile(r"^2?(HA|HB|H|N|CA|CB|C)(?:x|_trosy)")
_KIND_RE = re.compile(r"^\dJ\(([A-Z]+),([A-Z]+)(\(i-1\))?\)(\[[a-z]+\])?$")

_TOP_KEYS = (
    "name",
    "description",
    "walk",
    "dimensions",
    "needs",
    "start",
    "trosy_capable",
    "trosy_only",
    "sensitivity_enhanced",
    "objective",
    "objective_reason",
    "references",
    "steps",
    "peaks",
)
_TOP_REQUIRED = ("name", "description", "walk", "dimensions", "needs", "start", "objective", "objective_reason", "steps", "peaks")
_COMMON_STEP_KEYS = ("name", "kind", "note", "decoupled", "trosy")
_STEP_KEYS = {
    "inept": ("from", "to", "active", "passive", "delay", "inphase", "antiphase"),
    "transfer": ("from", "to", "active", "passive", "delay", "inphase", "antiphase"),
    "refocus": ("from", "to", "active", "passive", "delay", "inphase", "antiphase"),
    "carbon-split": ("from", "to", "active", "passive", "delay", "inphase", "antiphase", "periods"),
    "shift-evolution": ("at", "mode", "t_max_ms", "within", "fixed_delay_ms", "coherence", "passive"),
    "multiple-quantum": ("from", "to", "delay", "fixed_delay_ms", "coherence", "passive"),
    "sensitivity-enhancement": ("from", "to", "active", "delay", "inphase", "antiphase"),
    "detect": ("at", "t_acq_ms", "coherence"),
}
_TROSY_KEYS = ("inphase", "antiphase", "coherence")
_PEAK_KEYS = ("label", "sign", "start", "path", "note")
_COUPLING_STEPS = ("inept", "transfer", "refocus", "carbon-split", "sensitivity-enhancement")
#: Longest sampling or acquisition time a file may give [ms].
_MAX_TIME_MS = 1000.0


# ---------------------------------------------------------------------------------------------------------
# Small helpers
# ---------------------------------------------------------------------------------------------------------


def _suggest(word, allowed) -> str:
    close = difflib.get_close_matches(str(word), [str(a) for a in allowed], n=1, cutoff=0.5)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _check_keys(table: Mapping, allowed, where: str) -> None:
    for key in table:
        if key not in allowed:
            raise BackboneError(
                f"{where}: unknown key {key!r}{_suggest(key, allowed)}; allowed keys are {', '.join(allowed)}"
            )


def _string(value, where: str, key: str, *, allow_empty: bool = False) -> str:
    if not isinstance(value, str) or (not allow_empty and not value.strip()):
        raise BackboneError(f"{where}: {key} must be a non-empty string, got {value!r}")
    return value.strip()


def _string_list(value, where: str, key: str, *, allow_single: bool = True) -> tuple[str, ...]:
    if isinstance(value, str) and allow_single:
        value = [value]
    if not isinstance(value, (list, tuple)) or not all(isinstance(v, str) and v.strip() for v in value):
        raise BackboneError(f"{where}: {key} must be a list of non-empty strings, got {value!r}")
    return tuple(v.strip() for v in value)


def _bool(value, where: str, key: str) -> bool:
    if not isinstance(value, bool):
        raise BackboneError(f"{where}: {key} must be true or false, got {value!r}")
    return value


def _time_ms(value, where: str, key: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise BackboneError(f"{where}: {key} must be a number of milliseconds, got {value!r}")
    if not 0.0 < float(value) <= _MAX_TIME_MS:
        raise BackboneError(f"{where}: {key} = {value!r} ms is outside the allowed range (0, {_MAX_TIME_MS:g}] ms")
    return float(value) * 1e-3


def _coupling_atoms(kind: str) -> tuple[str, str, int]:
    """(atom a, atom b, offset of b relative to a's residue) of a coupling kind, e.g. 2J(N,CA(i-1)) -> N, CA, -1."""
    m = _KIND_RE.match(kind)
    if m is None:
        raise BackboneError(f"coupling kind {kind!r} cannot be read as nJ(A,B)")
    a, b, prev, _ = m.groups()
    if kind == "1J(N,C)":
        return a, b, -1  # the peptide bond: N(i)-C'(i-1)
    return a, b, -1 if prev else 0


def _coupling_family(entry: str) -> tuple[str, ...]:
    """Kinds of COUPLINGS an entry names: the kind itself, or every bracketed variant of a family."""
    if entry in COUPLINGS:
        return (entry,)
    return tuple(k for k in COUPLINGS if k.split("[", 1)[0] == entry and "[" in k)


def _transverse_of(coherence: str) -> str | None:
    m = _TRANSVERSE_RE.match(coherence)
    return m.group(1) if m else None


# ---------------------------------------------------------------------------------------------------------
# Atom
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Atom:
    """An atom of a step or peak: PDB name and residue offset (0 for ``(i)``, −1 for ``(i-1)``).

    ``offset`` None (written without ``(i…)``) means "on the residue the pathway is on at that point", used by
    steps that act on whichever residue an earlier branch chose (e.g. the CA → CB split of HNCACB).
    """

    atom: str
    offset: int | None = None

    def __post_init__(self):
        if self.atom not in _ATOMS:
            raise BackboneError(f"atom {self.atom!r}{_suggest(self.atom, _ATOMS)}; allowed atoms are {', '.join(_ATOMS)}")
        if self.offset is not None and self.offset not in (0, -1):
            raise BackboneError(f"atom {self.atom}: residue offset {self.offset} is not allowed; use (i) or (i-1)")

    @classmethod
    def parse(cls, text, where: str = "atom") -> Atom:
        """``"CA(i)"``, ``"CA(i-1)"`` or ``"CA"``."""
        if not isinstance(text, str):
            raise BackboneError(f"{where}: expected an atom such as 'CA(i)' or 'CA(i-1)', got {text!r}")
        m = _ATOM_RE.match(text)
        if m is None:
            raise BackboneError(f"{where}: {text!r} is not an atom; write e.g. 'CA(i)', 'CA(i-1)' or 'CA'")
        name, sign, num = m.groups()
        offset = None
        if "(" in text:
            offset = 0 if sign is None else (int(num) if sign == "+" else -int(num))
        try:
            return cls(name, offset)
        except BackboneError as err:
            raise BackboneError(f"{where}: {err}") from err

    @property
    def label(self) -> str:
        """``CA(i)``, ``CA(i-1)`` or ``CA``."""
        if self.offset is None:
            return self.atom
        return f"{self.atom}(i)" if self.offset == 0 else f"{self.atom}(i{self.offset:+d})"

    @property
    def site(self) -> str:
        """Labeling site of the atom."""
        return _ATOM_SITE[self.atom]

    def matches(self, position: tuple[int, str]) -> bool:
        """True if a pathway at ``position`` = (offset, atom) is at this atom."""
        off, atom = position
        return atom == self.atom and (self.offset is None or self.offset == off)

    def resolve(self, current_offset: int) -> tuple[int, str]:
        """(offset, atom) with an offset-less atom placed on ``current_offset``."""
        return (current_offset if self.offset is None else self.offset, self.atom)

    def __str__(self) -> str:
        return self.label


def _position_label(position: tuple[int, str]) -> str:
    return Atom(position[1], position[0]).label


# ---------------------------------------------------------------------------------------------------------
# Coherence specifications
# ---------------------------------------------------------------------------------------------------------


def _coherence_spec(value, where: str, key: str, *, allow_pair: bool = False):
    """A coherence name, a pair [in-phase, anti-phase] (its partner decoupled: mean rate), or atom -> either."""
    known = known_coherences()

    def one(v, k):
        if isinstance(v, str):
            if v not in known:
                raise BackboneError(
                    f"{where}: {k} = {v!r} is not a known coherence{_suggest(v, known)}; known are {', '.join(known)}"
                )
            return v
        if allow_pair and isinstance(v, (list, tuple)) and len(v) == 2:
            return tuple(one(x, f"{k}[{n}]") for n, x in enumerate(v))
        pair = " or a pair [in-phase, anti-phase]" if allow_pair else ""
        raise BackboneError(f"{where}: {k} must be a coherence name{pair}, got {v!r}")

    if isinstance(value, Mapping):
        out = {}
        for atom, v in value.items():
            if atom not in _ATOMS:
                raise BackboneError(
                    f"{where}: {key}.{atom}: {atom!r} is not an atom{_suggest(atom, _ATOMS)}; allowed are {', '.join(_ATOMS)}"
                )
            out[atom] = one(v, f"{key}.{atom}")
        if not out:
            raise BackboneError(f"{where}: {key} must not be an empty table")
        return MappingProxyType(out)
    return one(value, key)


def coherence_for(spec, atom: str):
    """The coherence (name or decoupled pair) a spec gives for transverse ``atom``, or None."""
    if spec is None:
        return None
    if isinstance(spec, Mapping):
        return spec.get(atom)
    return spec


# ---------------------------------------------------------------------------------------------------------
# Step
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Step:
    """One period of the sequence (kinds: :data:`STEP_KINDS`). Built by the loader; validated on construction.

    ``from_``/``to`` are tuples of :class:`Atom` (``at`` steps have ``from_ == to``); ``active`` holds one
    coupling kind per partner pair; ``passive`` kinds (or families such as ``1J(CB,CG)``) evolve on the
    transverse spin and give cos factors, resolved from the graph per residue; ``decoupled`` kinds are removed
    by pulses and listed for the reader. Coherences: ``inphase``/``antiphase`` for coupling periods,
    ``coherence`` for evolution, multiple-quantum and detection; each a name, a decoupled pair or a table by
    transverse atom, with ``trosy`` replacements for the TROSY version. Times in seconds.
    """

    index: int
    name: str
    kind: str
    source: str
    from_: tuple[Atom, ...] = ()
    to: tuple[Atom, ...] = ()
    active: tuple[str, ...] = ()
    passive: tuple[str, ...] = ()
    decoupled: tuple[str, ...] = ()
    delay: str | None = None
    fixed_delay_s: float | None = None
    inphase: object = None
    antiphase: object = None
    coherence: object = None
    trosy: Mapping = field(default_factory=dict, hash=False)
    mode: str | None = None
    t_max_s: float | None = None
    within: str | None = None
    periods: int = 1
    note: str = ""

    @property
    def where(self) -> str:
        return f"{self.source}: step {self.index + 1} ({self.name!r})"

    @property
    def is_evolution(self) -> bool:
        return self.kind == "shift-evolution"

    @property
    def at(self) -> Atom:
        return self.from_[0]

    @property
    def pairs(self) -> tuple[tuple[Atom, Atom], ...]:
        """(from, to) atom pairs of a coupling step: one-to-many, many-to-one or element-wise."""
        f, t = self.from_, self.to
        if len(f) == len(t):
            return tuple(zip(f, t))
        if len(f) == 1:
            return tuple((f[0], x) for x in t)
        return tuple((x, t[0]) for x in f)

    @property
    def branching(self) -> bool:
        """True when a pathway at one atom can take several pairs (a choice the peaks must make)."""
        return self.kind in _COUPLING_STEPS and len(self.from_) == 1 and len(self.to) > 1

    def coherences(self, trosy: bool = False) -> dict:
        """The coherence specs in effect: {"inphase", "antiphase", "coherence"} (TROSY replacements applied)."""
        out = {"inphase": self.inphase, "antiphase": self.antiphase, "coherence": self.coherence}
        if trosy:
            out.update(self.trosy)
        return out

    def __post_init__(self):
        w = self.where
        if self.kind not in STEP_KINDS:
            raise BackboneError(
                f"{w}: kind {self.kind!r} is unknown{_suggest(self.kind, STEP_KINDS)}; allowed are {', '.join(STEP_KINDS)}"
            )
        for entry in self.active + self.decoupled:
            if entry not in COUPLINGS:
                raise BackboneError(
                    f"{w}: coupling {entry!r} is unknown{_suggest(entry, COUPLINGS)}; known kinds are {', '.join(COUPLINGS)}"
                )
        for entry in self.passive:
            if not _coupling_family(entry):
                families = sorted(set(COUPLINGS) | {k.split("[", 1)[0] for k in COUPLINGS})
                raise BackboneError(
                    f"{w}: passive coupling {entry!r} is unknown{_suggest(entry, families)}; known are {', '.join(families)}"
                )
        if self.kind in _COUPLING_STEPS:
            self._check_coupling_step()
        elif self.kind == "shift-evolution":
            self._check_evolution()
        elif self.kind == "multiple-quantum":
            self._check_mq()
        else:  # detect
            if len(self.from_) != 1 or self.to != self.from_:
                raise BackboneError(f"{w}: key 'at' must name one atom")
            if self.t_max_s is None:
                raise BackboneError(f"{w}: key 't_acq_ms' (acquisition time) is required")
            self._check_coherence_atoms("coherence", {self.at.atom})
        for key in self.trosy:
            if key not in _TROSY_KEYS:
                raise BackboneError(f"{w}: unknown key 'trosy.{key}'{_suggest(key, _TROSY_KEYS)}; allowed are {', '.join(_TROSY_KEYS)}")

    # -- per kind ------------------------------------------------------------------------------------------

    def _transverse_atoms(self) -> set[str]:
        if self.kind in ("inept", "transfer"):
            return {a.atom for a in self.from_}
        if self.kind == "carbon-split" and self.periods == 2:
            return {a.atom for a in self.from_} | {a.atom for a in self.to}
        if self.kind == "carbon-split" and len(self.to) > 1:
            return {a.atom for a in self.from_}
        if self.kind == "sensitivity-enhancement":
            return {a.atom for a in self.from_} | {a.atom for a in self.to}
        return {a.atom for a in self.to}

    def _check_coherence_atoms(self, key: str, atoms: set[str], *, required: bool = True) -> None:
        w = self.where
        for mode, specs in (("", {key: getattr(self, key)}), ("trosy.", {key: self.trosy.get(key)})):
            spec = specs[key]
            if spec is None:
                if required and not mode:
                    raise BackboneError(f"{w}: key {key!r} (a coherence name) is required for kind {self.kind!r}")
                continue
            if isinstance(spec, Mapping):
                missing = sorted(atoms - set(spec))
                if missing:
                    raise BackboneError(
                        f"{w}: {mode}{key} has no entry for transverse atom {missing[0]}; give {', '.join(sorted(atoms))}"
                    )
                extra = sorted(set(spec) - atoms)
                if extra:
                    raise BackboneError(
                        f"{w}: {mode}{key}.{extra[0]}: {extra[0]} is not transverse in this step (that is {', '.join(sorted(atoms))})"
                    )
                items = [(a, spec[a]) for a in sorted(atoms)]
            else:
                items = [(a, spec) for a in sorted(atoms)]
            if self.kind == "multiple-quantum":
                continue
            if self.kind == "sensitivity-enhancement" and not isinstance(spec, Mapping):
                # The two components spend the extra period on either spin: the coherence may be of either.
                for name in (spec if isinstance(spec, tuple) else (spec,)):
                    t = _transverse_of(name)
                    if t is not None and t not in atoms:
                        raise BackboneError(
                            f"{w}: {mode}{key} = {name!r} is a coherence of {t}, not of {' or '.join(sorted(atoms))}"
                        )
                continue
            for atom, value in items:
                for name in (value if isinstance(value, tuple) else (value,)):
                    t = _transverse_of(name)
                    if t is not None and t != atom:
                        raise BackboneError(
                            f"{w}: {mode}{key} = {name!r} is a coherence of {t}, but {atom} is the transverse spin here"
                        )

    def _check_coupling_step(self) -> None:
        w = self.where
        if not self.from_ or not self.to:
            raise BackboneError(f"{w}: keys 'from' and 'to' are required for kind {self.kind!r}")
        nf, nt = len(self.from_), len(self.to)
        if nf > 1 and nt > 1 and nf != nt:
            raise BackboneError(f"{w}: 'from' and 'to' lists must have equal length when both are lists ({nf} vs {nt})")
        if self.kind in ("inept", "sensitivity-enhancement") and nf == 1 and nt > 1:
            raise BackboneError(f"{w}: an {self.kind} step has one partner; use kind 'transfer' for several ('to' list)")
        if self.kind == "transfer" and nf > 1 and nt == 1:
            raise BackboneError(f"{w}: a transfer from several atoms into one is a 'refocus' step")
        if self.kind == "refocus" and nf == 1 and nt > 1:
            raise BackboneError(f"{w}: a refocus period ends on one atom; use kind 'transfer' to build to several")
        if self.kind == "carbon-split":
            self._check_split()
        pairs = self.pairs
        if len(self.active) != len(pairs) and not (self.kind == "carbon-split"):
            raise BackboneError(
                f"{w}: key 'active' lists {len(self.active)} couplings for {len(pairs)} atom pairs; give one per pair, in order"
            )
        if self.kind != "carbon-split":
            for (a, b), kind in zip(pairs, self.active):
                self._check_kind_joins(kind, a, b, "active")
        for key in ("inphase", "antiphase"):
            self._check_coherence_atoms(key, self._transverse_atoms())
        if self.delay is None:
            raise BackboneError(f"{w}: key 'delay' (the name of the delay this period uses) is required")
        if self.coherence is not None or self.trosy.get("coherence") is not None:
            raise BackboneError(f"{w}: key 'coherence' is for evolution and detection steps; use inphase/antiphase")

    def _check_split(self) -> None:
        w = self.where
        if len(self.active) != 1:
            raise BackboneError(f"{w}: a carbon-split step has one active coupling (e.g. '1J(CA,CB)'), got {list(self.active)}")
        if self.periods not in (1, 2):
            raise BackboneError(f"{w}: periods must be 1 or 2, got {self.periods!r}")
        many, one = (self.to, self.from_[0]) if len(self.to) > 1 else (self.from_, self.to[0])
        if len(many) != 2 or len(self.from_) + len(self.to) != 3:
            raise BackboneError(
                f"{w}: a carbon-split goes from one carbon to two (e.g. from 'CA' to ['CA', 'CB']) or back from two to one"
            )
        if not any(a == one for a in many):
            raise BackboneError(f"{w}: the two-atom side must contain {one.label}, the carbon that keeps its pathway")
        other = next(a for a in many if a != one)
        self._check_kind_joins(self.active[0], one, other, "active")
        if self.periods == 2 and len(self.to) > 1:
            raise BackboneError(f"{w}: periods = 2 (both periods in a row) ends on one carbon: write from two atoms to one")

    def _check_kind_joins(self, kind: str, a: Atom, b: Atom, key: str) -> None:
        x, y, off = _coupling_atoms(kind)
        names = {a.atom, b.atom}
        if names != {x, y}:
            raise BackboneError(
                f"{self.where}: {key} coupling {kind!r} joins {x} and {y}, not {a.label} and {b.label}"
            )
        if a.offset is not None and b.offset is not None:
            first, second = (a, b) if a.atom == x else (b, a)
            if second.offset - first.offset != off:
                raise BackboneError(
                    f"{self.where}: {key} coupling {kind!r} does not join {a.label} and {b.label} (wrong residue offset)"
                )

    def _check_evolution(self) -> None:
        w = self.where
        if len(self.from_) != 1:
            raise BackboneError(f"{w}: key 'at' must name one atom (the evolving nucleus)")
        if self.mode not in EVOLUTION_MODES:
            raise BackboneError(
                f"{w}: mode {self.mode!r} is unknown{_suggest(self.mode, EVOLUTION_MODES)}; allowed are {', '.join(EVOLUTION_MODES)}"
            )
        if self.t_max_s is None:
            raise BackboneError(f"{w}: key 't_max_ms' (last sampled evolution time) is required")
        if self.mode == "real-time" and (self.within or self.fixed_delay_s is not None or self.passive):
            raise BackboneError(
                f"{w}: a real-time evolution takes no 'within', 'fixed_delay_ms' or 'passive' (couplings evolving in "
                "real time split the line, they are not a transfer loss)"
            )
        if self.mode == "semi-constant-time" and not self.within:
            raise BackboneError(f"{w}: a semi-constant-time evolution needs 'within' (the transfer step it is merged with)")
        if self.mode == "constant-time":
            if bool(self.within) == (self.fixed_delay_s is not None):
                raise BackboneError(
                    f"{w}: a constant-time evolution needs exactly one of 'within' (inside a transfer step) or "
                    "'fixed_delay_ms' (its own period)"
                )
            if self.fixed_delay_s is not None and self.t_max_s > self.fixed_delay_s * (1 + 1e-12):
                raise BackboneError(f"{w}: t_max_ms must not exceed fixed_delay_ms in a constant-time period")
        if self.within and self.passive:
            raise BackboneError(f"{w}: passive couplings of an evolution 'within' a step belong to that step")
        if self.delay is not None:
            raise BackboneError(f"{w}: key 'delay' is for coupling periods; an evolution has t_max_ms")
        self._check_coherence_atoms("coherence", {self.at.atom})

    def _check_mq(self) -> None:
        w = self.where
        if len(self.from_) != 1 or len(self.to) != 1:
            raise BackboneError(f"{w}: a multiple-quantum period joins one 'from' and one 'to' atom")
        if (self.delay is None) == (self.fixed_delay_s is None):
            raise BackboneError(f"{w}: give exactly one of 'delay' (a named delay) or 'fixed_delay_ms'")
        self._check_coherence_atoms("coherence", {self.to[0].atom})


# ---------------------------------------------------------------------------------------------------------
# Peak
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Peak:
    """A peak: its label (the nucleus in the extra indirect dimension, ``CA(i-1)``), expected sign, start atom
    and the branch it takes at each branching step (``path``: step name → atom label as written in the step)."""

    label: str
    sign: int
    start: Atom
    path: Mapping[str, str]
    source: str
    note: str = ""

    def __post_init__(self):
        w = f"{self.source}: peak {self.label!r}"
        if self.sign not in (1, -1) or isinstance(self.sign, bool):
            raise BackboneError(f"{w}: sign must be +1 or -1, got {self.sign!r}")
        object.__setattr__(self, "path", MappingProxyType(dict(self.path)))


# ---------------------------------------------------------------------------------------------------------
# Experiment
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Segment:
    """One step as one peak's pathway passes it: which pair it takes and where it is before and after."""

    step: Step
    pair: int | None  # index into step.pairs, or None for at-steps
    before: tuple[int, str]
    after: tuple[int, str]
    branch: str | None  # the branch label taken at a branching step (or split), else None


@dataclass(frozen=True)
class ExperimentModel:
    """A validated experiment model (see the module docstring and ``models/experiments/README.md``)."""

    name: str
    description: str
    walk: str
    dimensions: tuple[str, ...]
    needs: tuple[str, ...]
    start: tuple[Atom, ...]
    trosy_capable: bool
    trosy_only: bool
    sensitivity_enhanced: bool
    objective: str
    objective_reason: str
    references: tuple[str, ...]
    steps: tuple[Step, ...]
    peaks: tuple[Peak, ...]
    source: str
    paths: Mapping[str, tuple[Segment, ...]] = field(default=None, hash=False, compare=False)

    def __post_init__(self):
        w = self.source
        if self.walk not in WALKS:
            raise BackboneError(f"{w}: walk {self.walk!r} is unknown{_suggest(self.walk, WALKS)}; allowed are {', '.join(WALKS)}")
        for site in self.needs:
            if site not in SITES:
                raise BackboneError(f"{w}: needs: {site!r} is not a labeling site{_suggest(site, SITES)}; sites are {', '.join(SITES)}")
        for atom in self.dimensions:
            if atom not in _ATOMS:
                raise BackboneError(f"{w}: dimensions: {atom!r} is not an atom{_suggest(atom, _ATOMS)}; allowed are {', '.join(_ATOMS)}")
        if not self.steps:
            raise BackboneError(f"{w}: steps must hold at least one [[steps]] table")
        if not self.peaks:
            raise BackboneError(f"{w}: peaks must hold at least one [[peaks]] table")
        names = [s.name for s in self.steps]
        for s in self.steps:
            if names.count(s.name) > 1:
                raise BackboneError(f"{s.where}: step name {s.name!r} is used twice; names must be unique")
        for s in self.start:
            if s.offset is None or s.atom not in ("H", "HA", "HB"):
                raise BackboneError(f"{w}: start {s.label!r} must be an amide 'H(i)' or a carbon-bound 'HA(..)'/'HB(..)' with offset")
        if self.steps[-1].kind != "detect":
            raise BackboneError(f"{self.steps[-1].where}: the last step must be of kind 'detect'")
        if self.trosy_only and not self.trosy_capable:
            raise BackboneError(f"{w}: trosy_only = true needs trosy_capable = true")
        if self.trosy_capable and not self.trosy_only and not any(s.trosy for s in self.steps):
            raise BackboneError(f"{w}: trosy_capable = true but no step has a 'trosy' table of replacement coherences")
        se_steps = [s for s in self.steps if s.kind == "sensitivity-enhancement"]
        if self.sensitivity_enhanced and not se_steps:
            raise BackboneError(f"{w}: sensitivity_enhanced = true needs a step of kind 'sensitivity-enhancement'")
        if len(se_steps) > 1:
            raise BackboneError(f"{se_steps[1].where}: only one sensitivity-enhancement step is allowed")
        self._check_delays()
        labels = [p.label for p in self.peaks]
        for p in self.peaks:
            if labels.count(p.label) > 1:
                raise BackboneError(f"{w}: peak label {p.label!r} is used twice")
        if self.objective not in OBJECTIVES and self.objective not in labels:
            allowed = list(OBJECTIVES) + labels
            raise BackboneError(
                f"{w}: objective {self.objective!r}{_suggest(self.objective, allowed)}; allowed are {', '.join(allowed)}"
            )
        object.__setattr__(self, "paths", MappingProxyType({p.label: self._trace(p) for p in self.peaks}))
        evolved = {seg.step.at.atom for segs in self.paths.values() for seg in segs if seg.step.kind in ("shift-evolution", "detect")}
        if evolved != set(self.dimensions):
            raise BackboneError(
                f"{w}: dimensions {list(self.dimensions)} do not match the nuclei the peaks evolve and detect "
                f"({', '.join(sorted(evolved))})"
            )
        for s in self.steps:
            if not any(seg.step is s for segs in self.paths.values() for seg in segs):
                raise BackboneError(f"{s.where}: no peak's pathway passes this step")

    def _check_delays(self) -> None:
        by_name = {s.name: s for s in self.steps}
        coupling_delays = {s.delay for s in self.steps if s.kind in _COUPLING_STEPS}
        for s in self.steps:
            if s.within:
                host = by_name.get(s.within)
                if host is None:
                    raise BackboneError(
                        f"{s.where}: within = {s.within!r} names no step{_suggest(s.within, by_name)}; steps are {', '.join(by_name)}"
                    )
                if host.kind not in _COUPLING_STEPS or host.kind == "sensitivity-enhancement":
                    raise BackboneError(f"{s.where}: within = {s.within!r} must name a transfer period, not a {host.kind!r} step")
            if s.kind == "multiple-quantum" and s.delay is not None and s.delay not in coupling_delays:
                raise BackboneError(
                    f"{s.where}: delay {s.delay!r} must also be used by a coupling period (it has no coupling of its own "
                    "to set it); or give fixed_delay_ms"
                )

    def _trace(self, peak: Peak) -> tuple[Segment, ...]:
        """The segments of ``peak``'s pathway; errors name the peak, the step and the key."""
        pw = f"{self.source}: peak {peak.label!r}"
        if not any(peak.start == s for s in self.start):
            raise BackboneError(f"{pw}: start {peak.start.label!r} is not one of the experiment's start atoms {[s.label for s in self.start]}")
        by_name = {s.name: s for s in self.steps}
        for step_name in peak.path:
            if step_name not in by_name:
                raise BackboneError(
                    f"{pw}: path names step {step_name!r}, which does not exist{_suggest(step_name, by_name)}; steps are {', '.join(by_name)}"
                )
        pos = (peak.start.offset, peak.start.atom)
        segments = []
        evolved = []
        for step in self.steps:
            sw = f"{pw}, step {step.index + 1} ({step.name!r})"
            branch_key = peak.path.get(step.name)
            if step.kind in ("shift-evolution", "detect"):
                if not step.at.matches(pos):
                    if step.kind == "detect":
                        raise BackboneError(f"{sw}: the pathway is at {_position_label(pos)}, but the step detects {step.at.label}")
                    if branch_key is not None:
                        raise BackboneError(f"{sw}: path: step {step.name!r} does not branch")
                    continue  # another nucleus evolves in this period on this pathway
                if branch_key is not None:
                    raise BackboneError(f"{sw}: path: step {step.name!r} does not branch")
                segments.append(Segment(step, None, pos, pos, None))
                if step.kind == "shift-evolution":
                    evolved.append(pos)
                continue
            if step.kind == "multiple-quantum":
                f, t = step.from_[0], step.to[0]
                if not (f.matches(pos) or t.matches(pos)):
                    raise BackboneError(f"{sw}: the pathway is at {_position_label(pos)}, not at {f.label} or {t.label}")
                after = t.resolve(pos[0])
                segments.append(Segment(step, 0, pos, after, None))
                pos = after
                continue
            candidates = self._candidates(step, pos)
            if not candidates:
                starts = sorted({a.label for a in step.from_} | ({a.label for a in step.to} if step.kind in ("refocus", "sensitivity-enhancement") else set()))
                raise BackboneError(f"{sw}: the pathway is at {_position_label(pos)}, but the step starts from {', '.join(starts)}")
            branch_side = self._branch_side(step)
            if len(candidates) > 1:
                options = [step.pairs[k][branch_side].label for k in candidates]
                if branch_key is None:
                    raise BackboneError(f"{sw}: the step branches; key 'path' must choose one of {options}")
                chosen = [k for k in candidates if step.pairs[k][branch_side].label == branch_key]
                if not chosen:
                    raise BackboneError(
                        f"{sw}: path = {branch_key!r} is not a branch of this step{_suggest(branch_key, options)}; branches are {options}"
                    )
                k = chosen[0]
            else:
                k = candidates[0]
                if branch_key is not None and step.pairs[k][branch_side].label != branch_key:
                    label = step.pairs[k][branch_side].label
                    raise BackboneError(
                        f"{sw}: path = {branch_key!r}, but from {_position_label(pos)} the pathway can only take {label!r}"
                    )
            after = step.pairs[k][1].resolve(pos[0])
            branch = step.pairs[k][branch_side].label if len(step.pairs) > 1 else None
            segments.append(Segment(step, k, pos, after, branch))
            pos = after
        if not any(_position_label(p) == peak.label for p in evolved):
            raise BackboneError(
                f"{pw}: label {peak.label!r} does not name a nucleus this pathway evolves (it evolves "
                f"{', '.join(_position_label(p) for p in evolved) or 'none'})"
            )
        return tuple(segments)

    @staticmethod
    def _branch_side(step: Step) -> int:
        """Which side of a pair names the branch: the list side (to for one-to-many, from otherwise)."""
        return 1 if len(step.to) > 1 and len(step.from_) == 1 else 0

    @staticmethod
    def _candidates(step: Step, pos) -> list[int]:
        ks = [k for k, (a, _) in enumerate(step.pairs) if a.matches(pos)]
        if not ks and step.kind in ("refocus", "sensitivity-enhancement") and len(step.to) == len(step.from_):
            # Refocusing on a spin the pathway already sits on (second half of a refocused INEPT).
            ks = [k for k, (_, b) in enumerate(step.pairs) if b.matches(pos)]
        return ks

    # -- queries -------------------------------------------------------------------------------------------

    @property
    def delay_names(self) -> tuple[str, ...]:
        """Named delays in order of first use."""
        out: list[str] = []
        for s in self.steps:
            if s.delay and s.delay not in out:
                out.append(s.delay)
        return tuple(out)

    def step(self, name: str) -> Step:
        for s in self.steps:
            if s.name == name:
                return s
        raise BackboneError(f"{self.source}: no step {name!r}{_suggest(name, [s.name for s in self.steps])}")

    def peak(self, label: str) -> Peak:
        for p in self.peaks:
            if p.label == label:
                return p
        labels = [p.label for p in self.peaks]
        raise BackboneError(f"{self.name}: no peak {label!r}{_suggest(label, labels)}; peaks are {', '.join(labels)}")

    @property
    def amide_detected(self) -> bool:
        return self.steps[-1].at.atom == "H"


# ---------------------------------------------------------------------------------------------------------
# Reading
# ---------------------------------------------------------------------------------------------------------


def _atoms(value, where: str, key: str) -> tuple[Atom, ...]:
    items = value if isinstance(value, list) else [value]
    if not items:
        raise BackboneError(f"{where}: {key} must name at least one atom")
    return tuple(Atom.parse(v, f"{where}: {key}") for v in items)


def _step_from_table(raw, index: int, source: str) -> Step:
    if not isinstance(raw, Mapping):
        raise BackboneError(f"{source}: step {index + 1} must be a [[steps]] table, got {raw!r}")
    name = raw.get("name")
    label = f"step {index + 1}" + (f" ({name!r})" if isinstance(name, str) else "")
    where = f"{source}: {label}"
    if "kind" not in raw:
        raise BackboneError(f"{where}: key 'kind' is required; allowed kinds are {', '.join(STEP_KINDS)}")
    kind = raw["kind"]
    if kind not in STEP_KINDS:
        raise BackboneError(f"{where}: kind {kind!r} is unknown{_suggest(kind, STEP_KINDS)}; allowed are {', '.join(STEP_KINDS)}")
    _check_keys(raw, _COMMON_STEP_KEYS + _STEP_KEYS[kind], where)
    name = _string(raw.get("name"), where, "name")
    kw: dict = {"index": index, "name": name, "kind": kind, "source": source}
    if "at" in _STEP_KEYS[kind]:
        if "at" not in raw:
            raise BackboneError(f"{where}: key 'at' (the atom) is required for kind {kind!r}")
        kw["from_"] = kw["to"] = (Atom.parse(raw["at"], f"{where}: at"),)
    else:
        for key in ("from", "to"):
            if key not in raw:
                raise BackboneError(f"{where}: key {key!r} is required for kind {kind!r}")
        kw["from_"] = _atoms(raw["from"], where, "from")
        kw["to"] = _atoms(raw["to"], where, "to")
    for key in ("active", "passive", "decoupled"):
        if key in raw:
            kw[key] = _string_list(raw[key], where, key)
    if "delay" in raw:
        kw["delay"] = _string(raw["delay"], where, "delay")
    if "fixed_delay_ms" in raw:
        kw["fixed_delay_s"] = _time_ms(raw["fixed_delay_ms"], where, "fixed_delay_ms")
    for key in ("t_max_ms", "t_acq_ms"):
        if key in raw:
            kw["t_max_s"] = _time_ms(raw[key], where, key)
    pair_ok = kind in ("detect", "shift-evolution")
    for key in ("inphase", "antiphase", "coherence"):
        if key in raw:
            kw[key] = _coherence_spec(raw[key], where, key, allow_pair=pair_ok and key == "coherence")
    if "trosy" in raw:
        t = raw["trosy"]
        if not isinstance(t, Mapping):
            raise BackboneError(f"{where}: trosy must be a table such as {{inphase = \"N_trosy\"}}, got {t!r}")
        _check_keys(t, _TROSY_KEYS, f"{where}: trosy")
        kw["trosy"] = MappingProxyType(
            {k: _coherence_spec(v, where, f"trosy.{k}", allow_pair=pair_ok and k == "coherence") for k, v in t.items()}
        )
    if "mode" in raw:
        kw["mode"] = raw["mode"]
    if "within" in raw:
        kw["within"] = _string(raw["within"], where, "within")
    if "periods" in raw:
        p = raw["periods"]
        if isinstance(p, bool) or not isinstance(p, int):
            raise BackboneError(f"{where}: periods must be 1 or 2, got {p!r}")
        kw["periods"] = p
    if "note" in raw:
        kw["note"] = _string(raw["note"], where, "note", allow_empty=True)
    if kind == "shift-evolution" and "mode" not in raw:
        raise BackboneError(f"{where}: key 'mode' is required; allowed are {', '.join(EVOLUTION_MODES)}")
    return Step(**kw)


def _peak_from_table(raw, index: int, source: str, default_start: Atom | None) -> Peak:
    if not isinstance(raw, Mapping):
        raise BackboneError(f"{source}: peak {index + 1} must be a [[peaks]] table, got {raw!r}")
    where = f"{source}: peak {index + 1}" + (f" ({raw['label']!r})" if isinstance(raw.get("label"), str) else "")
    _check_keys(raw, _PEAK_KEYS, where)
    if "label" not in raw:
        raise BackboneError(f"{where}: key 'label' is required (e.g. 'CA(i-1)')")
    label = Atom.parse(raw["label"], f"{where}: label")
    if label.offset is None:
        raise BackboneError(f"{where}: label {raw['label']!r} needs a residue offset, e.g. 'CA(i)'")
    sign = raw.get("sign", 1)
    if "start" in raw:
        start = Atom.parse(raw["start"], f"{where}: start")
    elif default_start is not None:
        start = default_start
    else:
        raise BackboneError(f"{where}: key 'start' is required when the experiment has several start atoms")
    path = raw.get("path", {})
    if not isinstance(path, Mapping) or not all(isinstance(v, str) for v in path.values()):
        raise BackboneError(f"{where}: path must be a table of step name -> branch atom, e.g. {{\"N to CA\" = \"CA(i)\"}}")
    return Peak(label=label.label, sign=sign, start=start, path=path, source=source, note=str(raw.get("note", "")))


def experiment_from_dict(data: Mapping, source: str) -> ExperimentModel:
    """Build and validate a model from parsed TOML ``data``; ``source`` names it in every message."""
    if not isinstance(data, Mapping):
        raise BackboneError(f"{source}: an experiment model must be a TOML table")
    _check_keys(data, _TOP_KEYS, source)
    for key in _TOP_REQUIRED:
        if key not in data:
            raise BackboneError(f"{source}: key {key!r} is required")
    start = _atoms(data["start"], source, "start")
    raw_steps = data["steps"]
    if not isinstance(raw_steps, list):
        raise BackboneError(f"{source}: steps must be an array of [[steps]] tables")
    steps = tuple(_step_from_table(raw, k, source) for k, raw in enumerate(raw_steps))
    raw_peaks = data["peaks"]
    if not isinstance(raw_peaks, list):
        raise BackboneError(f"{source}: peaks must be an array of [[peaks]] tables")
    default_start = start[0] if len(start) == 1 else None
    peaks = tuple(_peak_from_table(raw, k, source, default_start) for k, raw in enumerate(raw_peaks))
    return ExperimentModel(
        name=_string(data["name"], source, "name"),
        description=_string(data["description"], source, "description"),
        walk=data["walk"],
        dimensions=_string_list(data["dimensions"], source, "dimensions", allow_single=False),
        needs=_string_list(data["needs"], source, "needs", allow_single=False),
        start=start,
        trosy_capable=_bool(data.get("trosy_capable", False), source, "trosy_capable"),
        trosy_only=_bool(data.get("trosy_only", False), source, "trosy_only"),
        sensitivity_enhanced=_bool(data.get("sensitivity_enhanced", False), source, "sensitivity_enhanced"),
        objective=_string(data["objective"], source, "objective"),
        objective_reason=_string(data["objective_reason"], source, "objective_reason"),
        references=_string_list(data.get("references", []), source, "references", allow_single=False),
        steps=steps,
        peaks=peaks,
        source=source,
    )


def _read_file(path: Path) -> ExperimentModel:
    return experiment_from_dict(read_toml(path, "experiment model file"), str(path))


#: Order in which bundled models are listed (2D references first, then by the nuclei they add); files not
#: named here follow in alphabetical order.
_BUNDLED_ORDER = ("hsqc", "trosy", "hnco", "hn-ca-co", "hnca", "hn-co-ca", "hncacb", "hn-co-cacb", "cbca-co-nh")


def _bundled_paths() -> dict[str, Path]:
    paths = {p.stem: p for p in models_dir("experiments").glob("*.toml")}
    rank = {stem: k for k, stem in enumerate(_BUNDLED_ORDER)}
    return {stem: paths[stem] for stem in sorted(paths, key=lambda s: (rank.get(s, len(rank)), s))}


@functools.lru_cache(maxsize=None)
def _bundled(stem: str) -> ExperimentModel:
    return _read_file(_bundled_paths()[stem])


def registered_experiments() -> dict[str, ExperimentModel]:
    """The bundled models of ``models/experiments/``, by published name, in file order."""
    out = {}
    for stem in _bundled_paths():
        model = _bundled(stem)
        if model.name in out:
            raise BackboneError(f"{model.source}: experiment name {model.name!r} is also used by {out[model.name].source}")
        out[model.name] = model
    return out


def _looks_like_path(text: str) -> bool:
    return "/" in text or "\\" in text or text.lower().endswith(".toml")


def load_experiment(name_or_path) -> ExperimentModel:
    """A bundled model by name or file stem, case-insensitive (``"HN(CO)CA"``, ``"hn-co-ca"``, ``"hnca"``), or a
    user's model file by path (validated with the same messages)."""
    if isinstance(name_or_path, ExperimentModel):
        return name_or_path
    if isinstance(name_or_path, Path) or (isinstance(name_or_path, str) and _looks_like_path(name_or_path)):
        return _read_file(Path(name_or_path))
    if not isinstance(name_or_path, str):
        raise BackboneError(f"experiment must be a name or a file path, got {name_or_path!r}")
    key = name_or_path.strip().lower()
    for stem in _bundled_paths():
        model = _bundled(stem)
        if key in (stem.lower(), model.name.lower()):
            return model
    names = [m.name for m in registered_experiments().values()]
    raise BackboneError(
        f"unknown experiment {name_or_path!r}{_suggest(name_or_path, names)}; known are {', '.join(names)}, "
        "or give the path of a TOML file"
    )
