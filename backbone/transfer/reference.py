"""Exact reference propagator: density operators of 1-4 weakly coupled spins 1/2 in Liouville space.

This module is the yardstick for the fast product-operator step algebra of :mod:`backbone.transfer`. It
solves the Liouville-von Neumann equation with phenomenological relaxation exactly (matrix exponential of
the full generator), with no assumption about which coherences take part, so it catches what a hand-reduced
2x2 or 4x4 algebra can miss: offsets that are not refocused, passive couplings, differential relaxation
during echoes, coherences leaking into unexpected terms.

Model
-----
* Spins are named by the caller (``("N", "H")``, ``("I", "S")``, ``("CA(i)", "CA(i-1)")``); a name starts
  with an upper-case letter and may go on with letters other than x, y, z (the component letters), digits
  and ``' ( ) + - _``. ``E`` is reserved for the unit operator.
* Hamiltonian in the rotating frame of each spin (rad s⁻¹), weak coupling only:
  H = Σ_k 2π ν_k I_kz + Σ_{k<l} 2π J_kl I_kz I_lz,  offsets ν_k and couplings J_kl in Hz with their sign.
  Strong-coupling (flip-flop) terms are left out, so homonuclear pairs must satisfy |Δν| ≫ |J|.
* Equation of motion for the deviation density operator: dρ/dt = −i[H, ρ] − Γ̂ρ. Relaxation drives every
  product operator towards zero; there is no thermal-equilibrium term, so longitudinal recovery towards
  Boltzmann polarization is not modelled (transfer amplitudes start from a coherence; recovery terms are
  removed by phase cycling in the experiments this reference checks).
* Pulses are ideal and instantaneous: a rotation by ``angle_deg`` about the axis cos φ x + sin φ y of
  the rotating frame, applied to any subset of spins.

Sign conventions
----------------
Rotations follow ρ → U ρ U† with U = exp(−i θ A) (Sørensen, Eich, Levitt, Bodenhausen & Ernst, Prog. NMR
Spectrosc. 16, 163 (1983); Levitt, Spin Dynamics, 2nd ed. 2008). Consequences, all with positive J, offset
and angle:

* offset ν for time t:     Ix → Ix cos(2πνt) + Iy sin(2πνt)
* coupling J for time t:   Ix → Ix cos(πJt) + 2IySz sin(πJt);  Iy → Iy cos(πJt) − 2IxSz sin(πJt)
* pulse β about x (φ = 0): Iz → Iz cos β − Iy sin β   (90x on Iz gives −Iy);  Iy → Iy cos β + Iz sin β
* pulse β about y (φ = 90): Iz → Iz cos β + Ix sin β   (90y on Iz gives +Ix)

A negative J (1J(N,H) ≈ −92 Hz) therefore gives a negative anti-phase amplitude; transfer functions that
cannot depend on the sign use |J|.

Product-operator basis
----------------------
The state is a real vector of the 4^n coefficients of the Cartesian product operators (Sørensen et al.
1983) B = 2^(q−1) Π_k I_k,a_k, a_k ∈ {E, x, y, z}, q the number of non-unit factors, and B = E/2 for q = 0.
All have the same norm Tr(B²) = 2^(n−2) and are mutually orthogonal, so the coefficient of B in ρ is
Tr(B ρ)/2^(n−2) and the generator is a real 4^n × 4^n matrix. Names are written ``Ix``, ``2IySz``,
``4NxHzCz``: the factor 2^(q−1) (omitted for q = 1), then one ``<spin><x|y|z>`` per factor, in any order.

Relaxation rule
---------------
Γ̂ is given in this basis. Its diagonal holds one rate per product operator, chosen by the operator's
*coherence pattern*: the set of spins with a transverse factor (x or y) and the set with a longitudinal
factor (z). Every operator of one pattern gets the same rate (``2NxHz`` and ``2NyHz`` alike), which is the
axial symmetry of relaxation about B0 in the secular approximation; a caller therefore sets exactly R(Ix)
with the key ``"Ix"`` and R(2IySz) with ``"2IySz"``, which is what the step algebra calls R_in and R_anti.
Operators not named take a default: a constant, or a rule such as :func:`additive_rates`
(R = Σ transverse R2 + Σ longitudinal R1 or anti-phase extra). Cross-relaxation (Iz ↔ Sz, Solomon 1955) and
cross-correlation (Ix ↔ 2IxSz, DD/CSA; Goldman 1984) are neglected unless given as off-diagonal entries
through ``cross``; they are symmetric and expanded to every phase of the transverse factors.
"""

from __future__ import annotations

import itertools
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from types import MappingProxyType
from typing import NamedTuple

import numpy as np
from scipy.linalg import expm

from backbone.errors import BackboneError

__all__ = [
    "MAX_SPINS",
    "SpinSystem",
    "CoherencePattern",
    "AdditiveRates",
    "Delay",
    "Pulse",
    "operator",
    "hamiltonian",
    "state_vector",
    "density_matrix",
    "state_from_density_matrix",
    "amplitude",
    "amplitudes",
    "coherence_pattern",
    "additive_rates",
    "relaxation_superoperator",
    "liouvillian",
    "pulse_superoperator",
    "propagator",
    "propagate",
    "echo",
    "inept_period",
    "refocused_inept",
    "constant_time_period",
    "mq_period",
    "InphaseAntiphase",
    "PartnerAmplitudes",
    "MQAmplitudes",
    "ConstantTimeAmplitudes",
    "reference_inept",
    "reference_refocused_inept",
    "reference_branch_transfer",
    "reference_homonuclear",
    "reference_mq",
    "reference_constant_time",
]

#: Largest spin system handled: 4 spins give a 256 × 256 generator; 5 would need 1024 × 1024 exponentials.
MAX_SPINS = 4

_COMPONENTS = ("E", "x", "y", "z")
_SPIN_NAME = re.compile(r"[A-Z][A-Za-w0-9'()+\-_]*\Z")
_SPIN_OPS = (
    np.eye(2, dtype=complex),
    np.array([[0, 1], [1, 0]], dtype=complex) / 2,
    np.array([[0, -1j], [1j, 0]], dtype=complex) / 2,
    np.array([[1, 0], [0, -1]], dtype=complex) / 2,
)


# ---------------------------------------------------------------------------------------------------------
# Spin system and product-operator names
# ---------------------------------------------------------------------------------------------------------


def _finite(value, what: str) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{what} must be a number, got {value!r}") from err
    if not math.isfinite(number):
        raise BackboneError(f"{what} must be a finite number, got {value!r}")
    return number


def _pair(key, message: str) -> tuple[str, str]:
    """A key that must be a pair of names (a bare string such as "NH" is not a pair)."""
    if isinstance(key, str) or not isinstance(key, Sequence) or len(key) != 2:
        raise BackboneError(message)
    return key[0], key[1]


@dataclass(frozen=True, eq=False)
class SpinSystem:
    """Spins 1/2 with weak scalar couplings and rotating-frame offsets.

    Parameters
    ----------
    spins : tuple of str
        Spin names, 1 to :data:`MAX_SPINS` of them, unique; each starts with an upper-case letter and may
        continue with letters other than x, y, z, digits and ``' ( ) + - _`` (PDB atom names such as ``N``,
        ``H``, ``CA``, with optional residue offsets such as ``CA(i-1)``). ``E`` is reserved for the unit
        operator. Keeping x, y, z out of names makes every product-operator name read one way only.
    couplings : mapping (spin, spin) → float [Hz]
        Scalar couplings J with their physical sign; the Hamiltonian term is 2π J I_z S_z. Pairs not given
        are uncoupled. Each pair may be given once, in either order.
    offsets : mapping spin → float [Hz]
        Rotating-frame offsets ν; spins not given are on resonance.
    """

    spins: tuple[str, ...]
    couplings: Mapping[tuple[str, str], float] = field(default_factory=dict)
    offsets: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self):
        spins = (self.spins,) if isinstance(self.spins, str) else tuple(self.spins)
        if not 1 <= len(spins) <= MAX_SPINS:
            raise BackboneError(f"spin system: give 1 to {MAX_SPINS} spins, got {len(spins)}")
        for name in spins:
            if not isinstance(name, str) or not _SPIN_NAME.match(name) or name == "E":
                raise BackboneError(
                    f"spin name {name!r}: must start with an upper-case letter and continue with letters "
                    "other than x, y, z, digits or ' ( ) + - _ ; 'E' is reserved for the unit operator"
                )
        if len(set(spins)) != len(spins):
            raise BackboneError(f"spin system: spin names must be unique, got {spins}")
        index = {name: k for k, name in enumerate(spins)}

        couplings: dict[tuple[str, str], float] = {}
        for pair, value in dict(self.couplings).items():
            a, b = _pair(pair, f"coupling key {pair!r}: must be a pair of spin names")
            for name in (a, b):
                if name not in index:
                    raise BackboneError(f"coupling {pair!r}: unknown spin {name!r}; spins are {', '.join(spins)}")
            if a == b:
                raise BackboneError(f"coupling {pair!r}: a spin cannot couple to itself")
            key = (a, b) if index[a] < index[b] else (b, a)
            if key in couplings:
                raise BackboneError(f"coupling {pair!r}: the pair {key} is given twice")
            couplings[key] = _finite(value, f"coupling J{pair!r} [Hz]")

        offsets: dict[str, float] = dict.fromkeys(spins, 0.0)
        for name, value in dict(self.offsets).items():
            if name not in index:
                raise BackboneError(f"offset of {name!r}: unknown spin; spins are {', '.join(spins)}")
            offsets[name] = _finite(value, f"offset of {name!r} [Hz]")

        object.__setattr__(self, "spins", spins)
        object.__setattr__(self, "couplings", MappingProxyType(couplings))
        object.__setattr__(self, "offsets", MappingProxyType(offsets))

    @property
    def n_spins(self) -> int:
        """Number of spins n."""
        return len(self.spins)

    @property
    def dimension(self) -> int:
        """Liouville-space dimension 4^n (length of a state vector)."""
        return 4**self.n_spins

    def coupling(self, a: str, b: str) -> float:
        """J between spins ``a`` and ``b`` [Hz], 0 if uncoupled."""
        self._index(a)
        self._index(b)
        return self.couplings.get((a, b), self.couplings.get((b, a), 0.0))

    @cached_property
    def basis_names(self) -> tuple[str, ...]:
        """Names of the 4^n product operators in state-vector order (first spin most significant)."""
        return tuple(_format(self, comps) for comps in self._labels)

    # -- cached internals ---------------------------------------------------------------------------------

    def _index(self, name: str) -> int:
        try:
            return self.spins.index(name)
        except ValueError as err:
            raise BackboneError(f"spin {name!r}: unknown; spins are {', '.join(self.spins)}") from err

    @property
    def _labels(self) -> tuple[tuple[int, ...], ...]:
        return _labels_for(self.n_spins)

    @property
    def _norm(self) -> float:
        return 2.0 ** (self.n_spins - 2)

    @property
    def _basis(self) -> np.ndarray:
        return _basis_for(self.n_spins)

    @cached_property
    def _hamiltonian(self) -> np.ndarray:
        n = self.n_spins
        dim = 2**n
        h = np.zeros((dim, dim), dtype=complex)
        for k, name in enumerate(self.spins):
            h += 2 * np.pi * self.offsets[name] * _single(n, k, 3)
        for (a, b), j in self.couplings.items():
            ia, ib = self.spins.index(a), self.spins.index(b)
            h += 2 * np.pi * j * _single(n, ia, 3) @ _single(n, ib, 3)
        return h

    @cached_property
    def _coherent_generator(self) -> np.ndarray:
        h = self._hamiltonian
        ops = self._basis
        commutators = -1j * (h @ ops - ops @ h)
        return _matrix_elements(self, ops, commutators)


@lru_cache(maxsize=None)
def _labels_for(n: int) -> tuple[tuple[int, ...], ...]:
    return tuple(itertools.product(range(4), repeat=n))


@lru_cache(maxsize=None)
def _basis_for(n: int) -> np.ndarray:
    """The 4^n product-operator matrices (read-only), in state-vector order."""
    ops = np.array([_product(comps) for comps in _labels_for(n)])
    ops.setflags(write=False)
    return ops


def _single(n: int, k: int, component: int) -> np.ndarray:
    """Single-spin operator I_k,component (unit factors on the other spins) in the 2^n Hilbert space."""
    out = np.ones((1, 1), dtype=complex)
    for m in range(n):
        out = np.kron(out, _SPIN_OPS[component] if m == k else _SPIN_OPS[0])
    return out


def _product(comps: Sequence[int]) -> np.ndarray:
    q = sum(1 for c in comps if c)
    out = np.ones((1, 1), dtype=complex)
    for c in comps:
        out = np.kron(out, _SPIN_OPS[c])
    return out * 2.0 ** (q - 1)


def _matrix_elements(system: SpinSystem, bras: np.ndarray, kets: np.ndarray) -> np.ndarray:
    """Real matrix M[j, k] = Tr(B_j K_k) / 2^(n−2) (B_j Hermitian product operators, K_k Hermitian)."""
    m = bras.shape[0]
    return (bras.reshape(m, -1) @ kets.transpose(0, 2, 1).reshape(m, -1).T).real / system._norm


def _format(system: SpinSystem, comps: Sequence[int]) -> str:
    q = sum(1 for c in comps if c)
    if q == 0:
        return "E"
    factors = "".join(f"{name}{_COMPONENTS[c]}" for name, c in zip(system.spins, comps) if c)
    return factors if q == 1 else f"{2 ** (q - 1)}{factors}"


def _parse(system: SpinSystem, name) -> tuple[int, ...]:
    """Component tuple of a product-operator name such as ``Ix``, ``2IySz`` or ``E``."""
    if not isinstance(name, str):
        raise BackboneError(f"product operator {name!r}: must be a name such as 'Ix' or '2IySz'")
    text = name.strip()
    if text == "E":
        return (0,) * system.n_spins
    match = re.match(r"(\d*)(.*)\Z", text)
    digits, rest = match.group(1), match.group(2)
    factors = re.findall(r"([^xyz]+)([xyz])", rest)
    if not rest or "".join(spin + comp for spin, comp in factors) != rest:
        raise BackboneError(
            f"product operator {name!r}: cannot be read as factors <spin><x|y|z>; "
            f"spins are {', '.join(system.spins)}, e.g. '{system.spins[0]}x'"
        )
    comps = [0] * system.n_spins
    for spin, comp in factors:
        if spin not in system.spins:
            raise BackboneError(
                f"product operator {name!r}: unknown spin {spin!r}; spins are {', '.join(system.spins)}"
            )
        k = system.spins.index(spin)
        if comps[k]:
            raise BackboneError(f"product operator {name!r}: spin {spin!r} appears twice")
        comps[k] = _COMPONENTS.index(comp)
    q = len(factors)
    expected = 2 ** (q - 1)
    given = int(digits) if digits else 1
    if given != expected:
        canonical = _format(system, comps)
        raise BackboneError(
            f"product operator {name!r}: a product of {q} factor(s) carries the factor {expected}; "
            f"write {canonical!r}"
        )
    return tuple(comps)


def _basis_index(comps: Sequence[int]) -> int:
    index = 0
    for c in comps:
        index = 4 * index + c
    return index


# ---------------------------------------------------------------------------------------------------------
# States and operators
# ---------------------------------------------------------------------------------------------------------


def operator(system: SpinSystem, name: str) -> np.ndarray:
    """Hilbert-space matrix (complex, 2^n × 2^n) of the product operator ``name``, e.g. ``"2NySz"``.

    Normalized as in the module docstring: ``2IySz`` is 2·I_y⊗S_z, ``E`` is the unit matrix over 2.
    """
    return system._basis[_basis_index(_parse(system, name))].copy()


def hamiltonian(system: SpinSystem) -> np.ndarray:
    """Rotating-frame Hamiltonian [rad s⁻¹] as a Hilbert-space matrix (complex, 2^n × 2^n)."""
    return system._hamiltonian.copy()


def state_vector(system: SpinSystem, amplitudes: Mapping[str, float]) -> np.ndarray:
    """State vector (length 4^n) with the given product-operator amplitudes, e.g. ``{"Hx": 1.0}``."""
    vec = np.zeros(system.dimension)
    for name, value in dict(amplitudes).items():
        k = _basis_index(_parse(system, name))
        vec[k] += _finite(value, f"amplitude of {name!r}")
    return vec


def density_matrix(system: SpinSystem, state) -> np.ndarray:
    """Hilbert-space density operator Σ_k c_k B_k of a state vector."""
    vec = _state(system, state)
    return np.tensordot(vec, system._basis, axes=1)


def state_from_density_matrix(system: SpinSystem, rho) -> np.ndarray:
    """State vector of a Hermitian density operator ``rho`` (2^n × 2^n): c_k = Tr(B_k ρ)/2^(n−2)."""
    rho = np.asarray(rho, dtype=complex)
    dim = 2**system.n_spins
    if rho.shape != (dim, dim):
        raise BackboneError(
            f"density operator: expected shape {(dim, dim)} for {system.n_spins} spins, got {rho.shape}"
        )
    if not np.allclose(rho, rho.conj().T, atol=1e-12 * max(1.0, np.abs(rho).max())):
        raise BackboneError("density operator: must be Hermitian")
    return np.einsum("kab,ba->k", system._basis, rho).real / system._norm


def amplitude(system: SpinSystem, state, name: str) -> float:
    """Coefficient of the product operator ``name`` in ``state`` (a state vector or a name→amplitude map).

    This is the amplitude the product-operator algebra speaks of: after an INEPT period from ``Ix`` it is
    sin(πJτ) for ``2IySz``. It equals Tr(B ρ)/2^(n−2), not the bare trace.
    """
    return float(_state(system, state)[_basis_index(_parse(system, name))])


def amplitudes(system: SpinSystem, state, *, atol: float = 1e-12) -> dict[str, float]:
    """All product-operator amplitudes of ``state`` larger than ``atol`` in magnitude, by name."""
    vec = _state(system, state)
    return {system.basis_names[k]: float(vec[k]) for k in np.flatnonzero(np.abs(vec) > atol)}


def coherence_pattern(system: SpinSystem, name: str) -> CoherencePattern:
    """Coherence pattern of the product operator ``name`` (which spins are transverse, which longitudinal)."""
    return _pattern(system, _parse(system, name))


def _state(system: SpinSystem, state) -> np.ndarray:
    if isinstance(state, Mapping):
        return state_vector(system, state)
    vec = np.asarray(state, dtype=float)
    if vec.shape != (system.dimension,):
        raise BackboneError(
            f"state: expected a vector of length {system.dimension} for {system.n_spins} spins, got shape {vec.shape}"
        )
    return vec


# ---------------------------------------------------------------------------------------------------------
# Relaxation
# ---------------------------------------------------------------------------------------------------------


class CoherencePattern(NamedTuple):
    """Which spins carry a transverse (x or y) and which a longitudinal (z) factor in a product operator.

    ``Ix`` → ({I}, {}); ``2IySz`` → ({I}, {S}); ``2IxSx`` → ({I, S}, {}); ``2IzSz`` → ({}, {I, S}).
    """

    transverse: frozenset[str]
    longitudinal: frozenset[str]


def _pattern(system: SpinSystem, comps: Sequence[int]) -> CoherencePattern:
    transverse = frozenset(name for name, c in zip(system.spins, comps) if c in (1, 2))
    longitudinal = frozenset(name for name, c in zip(system.spins, comps) if c == 3)
    return CoherencePattern(transverse, longitudinal)


@dataclass(frozen=True)
class AdditiveRates:
    """Default rate rule: one contribution per factor of the product operator [s⁻¹].

    R = Σ_{k transverse} R2_k + Σ_{k longitudinal} w_k, where w_k = R1_k (``longitudinal``) for the lone
    single-spin operator Kz and w_k = ``antiphase_extra``[k] when Kz multiplies other factors (the selective
    longitudinal rate of a passive spin: what makes 2IySz decay faster than Iy). Hence
    R(Ix) = R2_I, R(2IySz) = R2_I + extra_S, R(2IxSx) = R2_I + R2_S, R(2IzSz) = extra_I + extra_S,
    R(Sz) = R1_S. Spins missing from a mapping contribute 0. Build it with :func:`additive_rates`.
    """

    transverse: Mapping[str, float]
    longitudinal: Mapping[str, float]
    antiphase_extra: Mapping[str, float]

    def __call__(self, pattern: CoherencePattern) -> float:
        total = sum(self.transverse.get(k, 0.0) for k in pattern.transverse)
        lone_z = not pattern.transverse and len(pattern.longitudinal) == 1
        z_rates = self.longitudinal if lone_z else self.antiphase_extra
        return total + sum(z_rates.get(k, 0.0) for k in pattern.longitudinal)


def additive_rates(
    system: SpinSystem,
    *,
    transverse: Mapping[str, float] | None = None,
    longitudinal: Mapping[str, float] | None = None,
    antiphase_extra: Mapping[str, float] | None = None,
) -> AdditiveRates:
    """Rate rule of :class:`AdditiveRates` for ``system``, with its entries checked.

    Parameters
    ----------
    transverse : mapping spin → float [s⁻¹]
        R2 of each spin (its in-phase transverse rate).
    longitudinal : mapping spin → float [s⁻¹]
        R1 of each spin, used for the lone operator Kz.
    antiphase_extra : mapping spin → float [s⁻¹], optional
        Rate a Kz factor adds to a product with other factors (selective R1 of a passive spin); defaults
        to ``longitudinal``. To make R(Ix) = R_in and R(2IySz) = R_anti exactly, give
        transverse[I] = R_in and antiphase_extra[S] = R_anti − R_in.

    Each resulting rate must be ≥ 0; :func:`relaxation_superoperator` checks it per operator.
    """
    checked = []
    given = (("transverse", transverse), ("longitudinal", longitudinal), ("antiphase_extra", antiphase_extra))
    for label, mapping in given:
        if mapping is None:
            checked.append(None)
            continue
        out = {}
        for name, value in dict(mapping).items():
            system._index(name)
            out[name] = _finite(value, f"{label} rate of {name!r} [s^-1]")
        checked.append(MappingProxyType(out))
    t, l, a = checked
    empty = MappingProxyType({})
    l = l if l is not None else empty
    return AdditiveRates(t if t is not None else empty, l, a if a is not None else l)


def _rotations(system: SpinSystem, comps: tuple[int, ...], turns: Sequence[str]) -> tuple[tuple[int, ...], float]:
    """Rotate the transverse factors of the spins in ``turns`` by +90° about z: x → y, y → −x."""
    out = list(comps)
    sign = 1.0
    for name in turns:
        k = system.spins.index(name)
        if out[k] == 1:
            out[k] = 2
        elif out[k] == 2:
            out[k] = 1
            sign = -sign
    return tuple(out), sign


def relaxation_superoperator(
    system: SpinSystem,
    rates: Mapping[str, float] | None = None,
    *,
    default: float | Callable[[CoherencePattern], float] = 0.0,
    cross: Mapping[tuple[str, str], float] | None = None,
) -> np.ndarray:
    """Relaxation matrix Γ (real, 4^n × 4^n, [s⁻¹]) in the product-operator basis; dc/dt = −Γ c.

    Parameters
    ----------
    rates : mapping name → float [s⁻¹]
        Auto-relaxation rates by product-operator name. A name stands for its coherence pattern: ``"Nx"``
        sets Nx and Ny, ``"2NySz"`` sets 2NxSz and 2NySz, ``"2NxHx"`` the four 2N{x,y}H{x,y}. Two names of
        one pattern with different rates are an error. ``E`` (the unit operator) never relaxes.
    default : float or callable(CoherencePattern) → float [s⁻¹]
        Rate of every operator whose pattern is not in ``rates``: a constant, or a rule such as
        :func:`additive_rates`.
    cross : mapping (name, name) → float [s⁻¹], optional
        Symmetric off-diagonal entries Γ[a, b] = Γ[b, a] = σ: cross-relaxation (``("Iz", "Sz")``),
        DD/CSA cross-correlation (``("Ix", "2IxSz")``), ZQ/DQ differences (``("2IxSx", "2IySy")``). Both
        operators must have the same transverse spins (otherwise the term is non-secular). Each entry is
        copied to every phase of the transverse factors (rotation of any transverse spin by 90° about z,
        with its sign: ``("2IxSx", "2IySy")`` also sets Γ[2IySx, 2IxSy] = −σ); an entry that is not
        invariant under those rotations (``("Ix", "Iy")``) is an error. Without ``cross`` all
        cross-relaxation and cross-correlation is neglected.

    Γ must be positive semi-definite (no coherence grows); a violation is an error.
    """
    dim = system.dimension
    explicit: dict[CoherencePattern, tuple[str, float]] = {}
    for name, value in dict(rates or {}).items():
        comps = _parse(system, name)
        if not any(comps):
            raise BackboneError("relaxation rate of 'E': the unit operator does not relax; remove the entry")
        rate = _finite(value, f"relaxation rate of {name!r} [s^-1]")
        if rate < 0:
            raise BackboneError(f"relaxation rate of {name!r} = {rate:g} s^-1: must be >= 0")
        pattern = _pattern(system, comps)
        if pattern in explicit and explicit[pattern][1] != rate:
            other = explicit[pattern][0]
            raise BackboneError(
                f"relaxation rates of {other!r} and {name!r} differ ({explicit[pattern][1]:g} vs {rate:g} s^-1) "
                "but they are phases of one coherence and share one rate"
            )
        explicit[pattern] = (name, rate)

    if callable(default):
        rule = default
    else:
        constant = _finite(default, "default relaxation rate [s^-1]")
        if constant < 0:
            raise BackboneError(f"default relaxation rate = {constant:g} s^-1: must be >= 0")

        def rule(_pattern):
            return constant

    gamma = np.zeros((dim, dim))
    for k, comps in enumerate(system._labels):
        if not any(comps):
            continue
        pattern = _pattern(system, comps)
        if pattern in explicit:
            gamma[k, k] = explicit[pattern][1]
            continue
        name = system.basis_names[k]
        rate = _finite(rule(pattern), f"default relaxation rate of {name!r} [s^-1]")
        if rate < 0:
            raise BackboneError(f"default relaxation rate of {name!r} = {rate:g} s^-1: must be >= 0")
        gamma[k, k] = rate

    written: dict[tuple[int, int], tuple[float, tuple[str, str]]] = {}
    for pair, value in dict(cross or {}).items():
        name_a, name_b = _pair(pair, f"cross-relaxation key {pair!r}: must be a pair of product-operator names")
        a, b = _parse(system, name_a), _parse(system, name_b)
        sigma = _finite(value, f"cross-relaxation rate {pair!r} [s^-1]")
        if not any(a) or not any(b):
            raise BackboneError(f"cross-relaxation {pair!r}: the unit operator 'E' takes no part in relaxation")
        if a == b:
            raise BackboneError(f"cross-relaxation {pair!r}: needs two different operators (auto rates go in rates)")
        pa, pb = _pattern(system, a), _pattern(system, b)
        if pa.transverse != pb.transverse:
            raise BackboneError(
                f"cross-relaxation {pair!r}: both operators must have the same transverse spins "
                f"({sorted(pa.transverse)} vs {sorted(pb.transverse)}); other terms are non-secular"
            )
        transverse = sorted(pa.transverse, key=system.spins.index)
        for subset in itertools.product((False, True), repeat=len(transverse)):
            turns = [name for name, turn in zip(transverse, subset) if turn]
            ra, sa = _rotations(system, a, turns)
            rb, sb = _rotations(system, b, turns)
            ia, ib = _basis_index(ra), _basis_index(rb)
            key = (min(ia, ib), max(ia, ib))
            entry = sa * sb * sigma
            if key in written and not math.isclose(written[key][0], entry, rel_tol=1e-12, abs_tol=1e-300):
                raise BackboneError(
                    f"cross-relaxation {pair!r}: conflicts with {written[key][1]!r} (or is not invariant under "
                    "rotations about z) for the pair "
                    f"{system.basis_names[key[0]]!r}, {system.basis_names[key[1]]!r}"
                )
            written[key] = (entry, (name_a, name_b))
            gamma[ia, ib] = gamma[ib, ia] = entry

    if written:
        lowest = float(np.linalg.eigvalsh(gamma).min())
        if lowest < -1e-9 * max(1.0, float(np.abs(gamma).max())):
            raise BackboneError(
                f"relaxation matrix is not positive semi-definite (lowest eigenvalue {lowest:g} s^-1): "
                "a cross rate |sigma| must not exceed sqrt(R_a R_b) of the two auto rates"
            )
    return gamma


# ---------------------------------------------------------------------------------------------------------
# Sequence elements and propagation
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Delay:
    """Free evolution under offsets, couplings and relaxation for ``duration_s`` [s] (≥ 0).

    A plain delay is also the "simple delay with passive couplings": every coupling evolves.
    """

    duration_s: float

    def __post_init__(self):
        duration = _finite(self.duration_s, "delay duration [s]")
        if duration < 0:
            raise BackboneError(f"delay duration = {duration:g} s: must be >= 0")
        object.__setattr__(self, "duration_s", duration)


@dataclass(frozen=True)
class Pulse:
    """Ideal instantaneous rotation by ``angle_deg`` about cos φ x + sin φ y (φ = ``phase_deg``) on ``spins``.

    ``spins`` is a spin name or a tuple of names; phase 0 is x, 90 is y, 180 is −x.
    """

    spins: tuple[str, ...]
    angle_deg: float
    phase_deg: float = 0.0

    def __post_init__(self):
        spins = (self.spins,) if isinstance(self.spins, str) else tuple(self.spins)
        if not spins:
            raise BackboneError("pulse: give at least one spin")
        if len(set(spins)) != len(spins):
            raise BackboneError(f"pulse on {spins}: a spin is listed twice")
        object.__setattr__(self, "spins", spins)
        object.__setattr__(self, "angle_deg", _finite(self.angle_deg, "pulse angle [deg]"))
        object.__setattr__(self, "phase_deg", _finite(self.phase_deg, "pulse phase [deg]"))


def _relaxation(system: SpinSystem, relaxation) -> np.ndarray | None:
    if relaxation is None:
        return None
    gamma = np.asarray(relaxation, dtype=float)
    if gamma.shape != (system.dimension, system.dimension):
        raise BackboneError(
            f"relaxation matrix: expected shape {(system.dimension,) * 2} for {system.n_spins} spins, got {gamma.shape}"
        )
    return gamma


def liouvillian(system: SpinSystem, relaxation=None) -> np.ndarray:
    """Generator L = −i[H, ·] − Γ (real, 4^n × 4^n, [s⁻¹]) in the product-operator basis: dc/dt = L c."""
    gamma = _relaxation(system, relaxation)
    generator = system._coherent_generator
    return generator.copy() if gamma is None else generator - gamma


def _spin_rotation(angle_deg: float, phase_deg: float) -> np.ndarray:
    """4 × 4 matrix of U = exp(−iβ(cos φ Ix + sin φ Iy)) on one spin's (E, Ix, Iy, Iz).

    M[j, k] = Tr(P_j U P_k U†) / Tr(P_j²); the E row and column are those of the unit matrix.
    """
    phase = np.deg2rad(phase_deg)
    unitary = expm(-1j * np.deg2rad(angle_deg) * (np.cos(phase) * _SPIN_OPS[1] + np.sin(phase) * _SPIN_OPS[2]))
    ops = np.array(_SPIN_OPS)
    rotated = unitary @ ops @ unitary.conj().T
    norms = np.einsum("jab,jba->j", ops, ops).real
    return np.einsum("jab,kba->jk", ops, rotated).real / norms[:, None]


def pulse_superoperator(system: SpinSystem, pulse: Pulse) -> np.ndarray:
    """Real orthogonal matrix of an ideal pulse in the product-operator basis (c → M c).

    A pulse is a product of one-spin rotations, each mapping E to E and (x, y, z) among themselves, so it
    keeps the number of factors q (and with it the factor 2^(q−1)): the matrix is the Kronecker product of
    one 4 × 4 matrix per spin (unit matrix for spins not pulsed).
    """
    chosen = {system._index(name) for name in pulse.spins}
    rotation = _spin_rotation(pulse.angle_deg, pulse.phase_deg)
    out = np.ones((1, 1))
    for k in range(system.n_spins):
        out = np.kron(out, rotation if k in chosen else np.eye(4))
    return out


def propagator(system: SpinSystem, sequence: Sequence[Delay | Pulse], relaxation=None) -> np.ndarray:
    """Superoperator of a whole sequence (applied left to right), real 4^n × 4^n.

    ``relaxation`` is Γ from :func:`relaxation_superoperator` (None: no relaxation).
    """
    generator = liouvillian(system, relaxation)
    total = np.eye(system.dimension)
    delays: dict[float, np.ndarray] = {}  # echo halves share one exponential
    for element in sequence:
        if isinstance(element, Delay):
            if element.duration_s not in delays:
                delays[element.duration_s] = expm(generator * element.duration_s)
            step = delays[element.duration_s]
        elif isinstance(element, Pulse):
            step = pulse_superoperator(system, element)
        else:
            raise BackboneError(f"sequence element {element!r}: must be a Delay or a Pulse")
        total = step @ total
    return total


def propagate(system: SpinSystem, state, sequence: Sequence[Delay | Pulse], relaxation=None) -> np.ndarray:
    """State vector after ``sequence`` starting from ``state`` (vector or name→amplitude map)."""
    return propagator(system, sequence, relaxation) @ _state(system, state)


# ---------------------------------------------------------------------------------------------------------
# Standard elements
# ---------------------------------------------------------------------------------------------------------


def echo(tau_s: float, pulsed: str | Sequence[str], *, phase_deg: float = 0.0) -> list[Delay | Pulse]:
    """Echo τ/2 – 180(pulsed) – τ/2, total ``tau_s`` [s].

    Refocuses the offsets of the pulsed spins and their couplings to spins not pulsed; couplings between
    two pulsed spins (and between two spins not pulsed) evolve for the whole τ.
    """
    half = Delay(_finite(tau_s, "echo duration [s]") / 2)
    return [half, Pulse(pulsed, 180.0, phase_deg), half]


def inept_period(tau_s: float, spin: str, partner: str, *, phase_deg: float = 0.0) -> list[Delay | Pulse]:
    """INEPT period τ/2 – 180(spin, partner) – τ/2: the spin–partner coupling evolves for τ, offsets refocus.

    From in-phase Ix it gives Ix cos(πJτ) + 2IySz sin(πJτ) (project delay convention: τ is the total).
    """
    return echo(tau_s, (spin, partner), phase_deg=phase_deg)


def refocused_inept(
    tau1_s: float, tau2_s: float, source: str, target: str, *, phase_deg: float = 0.0
) -> list[Delay | Pulse]:
    """Refocused INEPT: τ1/2 – 180(I,S) – τ1/2 – 90(I,S) – τ2/2 – 180(I,S) – τ2/2.

    With 90° pulses about x, Ix → 2IySz (τ1) → −2IzSy → Sx sin(πJτ1) sin(πJτ2) (τ2).
    """
    pair = (source, target)
    return [
        *echo(tau1_s, pair, phase_deg=phase_deg),
        Pulse(pair, 90.0, phase_deg),
        *echo(tau2_s, pair, phase_deg=phase_deg),
    ]


def constant_time_period(
    total_s: float, evolution_s: float, spin: str, *, also_pulsed: Sequence[str] = ()
) -> list[Delay | Pulse]:
    """Constant-time period of fixed length T with shift evolution t: (T−t)/2 – 180 – (T+t)/2.

    The 180 acts on ``spin`` and ``also_pulsed``; the offset of ``spin`` evolves for t, its couplings to
    spins also pulsed evolve for T and its couplings to spins not pulsed for t. Requires 0 ≤ t ≤ T.
    """
    total = _finite(total_s, "constant-time period [s]")
    evolution = _finite(evolution_s, "constant-time evolution [s]")
    if not 0 <= evolution <= total:
        raise BackboneError(
            f"constant-time evolution = {evolution:g} s: must lie in [0, T] with T = {total:g} s"
        )
    return [Delay((total - evolution) / 2), Pulse((spin, *also_pulsed), 180.0), Delay((total + evolution) / 2)]


def mq_period(
    duration_s: float, converted: str | Sequence[str], refocused: str | Sequence[str], *, phase_deg: float = 0.0
) -> list[Delay | Pulse]:
    """Multiple-quantum period: 90(converted) – t/2 – 180(refocused) – t/2 – 90(converted).

    The first 90 turns anti-phase 2IxSz into MQ 2IxSy (sign with phase), the last turns it back. The
    active I–S coupling does not act on the MQ coherence; passive couplings to pulsed spins evolve.
    """
    return [Pulse(converted, 90.0, phase_deg), *echo(duration_s, refocused), Pulse(converted, 90.0, phase_deg)]


# ---------------------------------------------------------------------------------------------------------
# Scenarios: reference numbers for each step kind
# ---------------------------------------------------------------------------------------------------------


class InphaseAntiphase(NamedTuple):
    """Signed amplitudes of an in-phase and an anti-phase operator (see the returning function)."""

    inphase: float
    antiphase: float


class PartnerAmplitudes(NamedTuple):
    """Signed amplitudes after a spin I evolved under couplings to two partners S1, S2.

    ``inphase`` Ix, ``first`` 2IyS1z, ``second`` 2IyS2z, ``both`` 4IxS1zS2z.
    """

    inphase: float
    first: float
    second: float
    both: float


class MQAmplitudes(NamedTuple):
    """Signed amplitudes after a multiple-quantum period: ``antiphase`` 2IxSz, ``passive_antiphase`` 4IySzPz."""

    antiphase: float
    passive_antiphase: float


class ConstantTimeAmplitudes(NamedTuple):
    """Signed amplitudes after a constant-time period: Ix, Iy, 2IySz, 2IxSz."""

    inphase: float
    inphase_quadrature: float
    antiphase: float
    antiphase_quadrature: float


def _nonnegative(value, what: str) -> float:
    number = _finite(value, what)
    if number < 0:
        raise BackboneError(f"{what} = {number:g}: must be >= 0")
    return number


def _closure(r_inphase: float, r_first: float, r_second: float, what: str) -> float:
    """Additive rate of the doubly anti-phase term, R_first + R_second − R_in (each z factor adds its extra)."""
    rate = r_first + r_second - r_inphase
    if rate < 0:
        raise BackboneError(
            f"{what}: the additive default R_first + R_second - R_in = {rate:g} s^-1 is negative; give it explicitly"
        )
    return rate


def reference_inept(
    j_hz: float,
    tau_s: float,
    *,
    r_inphase: float = 0.0,
    r_antiphase: float = 0.0,
    offset_hz: float = 0.0,
    partner_offset_hz: float = 0.0,
) -> InphaseAntiphase:
    """INEPT period τ/2 – 180(I,S) – τ/2 from Ix = 1 on a two-spin system I–S.

    Parameters
    ----------
    j_hz : float [Hz]      J(I,S), signed.
    tau_s : float [s]      total evolution time of the coupling (project delay convention).
    r_inphase : float [s⁻¹]   R(Ix) = R(Iy).
    r_antiphase : float [s⁻¹] R(2IySz) = R(2IxSz).
    offset_hz, partner_offset_hz : float [Hz]   offsets of I and S (refocused by the echo).

    Returns
    -------
    InphaseAntiphase
        amplitudes of Ix and 2IySz; sin(πJτ) e^(−Rτ) for the anti-phase term when the rates are equal.
    """
    system = SpinSystem(("I", "S"), {("I", "S"): j_hz}, {"I": offset_hz, "S": partner_offset_hz})
    rates = {
        "Ix": _nonnegative(r_inphase, "r_inphase [s^-1]"),
        "2IySz": _nonnegative(r_antiphase, "r_antiphase [s^-1]"),
    }
    gamma = relaxation_superoperator(system, rates)
    final = propagate(system, {"Ix": 1.0}, inept_period(tau_s, "I", "S"), gamma)
    return InphaseAntiphase(amplitude(system, final, "Ix"), amplitude(system, final, "2IySz"))


def reference_refocused_inept(
    j_hz: float,
    tau1_s: float,
    tau2_s: float,
    *,
    r_source_inphase: float = 0.0,
    r_source_antiphase: float = 0.0,
    r_target_antiphase: float = 0.0,
    r_target_inphase: float = 0.0,
    source_offset_hz: float = 0.0,
    target_offset_hz: float = 0.0,
) -> InphaseAntiphase:
    """Refocused INEPT I → S from Ix = 1: τ1/2 – 180 – τ1/2 – 90x(I,S) – τ2/2 – 180 – τ2/2.

    Rates [s⁻¹]: R(Ix) ``r_source_inphase``, R(2IySz) ``r_source_antiphase``, R(2IzSy)
    ``r_target_antiphase``, R(Sx) ``r_target_inphase``; delays τ1, τ2 [s] are totals; J [Hz] signed.

    Returns
    -------
    InphaseAntiphase
        amplitudes of Sx (``inphase``, sin(πJτ1) sin(πJτ2) without relaxation) and 2IzSy (``antiphase``,
        −sin(πJτ1) cos(πJτ2)).
    """
    system = SpinSystem(("I", "S"), {("I", "S"): j_hz}, {"I": source_offset_hz, "S": target_offset_hz})
    rates = {
        "Ix": _nonnegative(r_source_inphase, "r_source_inphase [s^-1]"),
        "2IySz": _nonnegative(r_source_antiphase, "r_source_antiphase [s^-1]"),
        "2IzSy": _nonnegative(r_target_antiphase, "r_target_antiphase [s^-1]"),
        "Sx": _nonnegative(r_target_inphase, "r_target_inphase [s^-1]"),
    }
    gamma = relaxation_superoperator(system, rates)
    final = propagate(system, {"Ix": 1.0}, refocused_inept(tau1_s, tau2_s, "I", "S"), gamma)
    return InphaseAntiphase(amplitude(system, final, "Sx"), amplitude(system, final, "2IzSy"))


def _two_partner_echo(
    j_first_hz, j_second_hz, t_s, *, r_inphase, r_first, r_second, r_both, offset_hz, second_inverted
) -> PartnerAmplitudes:
    system = SpinSystem(
        ("I", "S1", "S2"), {("I", "S1"): j_first_hz, ("I", "S2"): j_second_hz}, {"I": offset_hz}
    )
    r_inphase = _nonnegative(r_inphase, "r_inphase [s^-1]")
    r_first = _nonnegative(r_first, "r_first [s^-1]")
    r_second = r_first if r_second is None else _nonnegative(r_second, "r_second [s^-1]")
    if r_both is None:
        r_both = _closure(r_inphase, r_first, r_second, "r_both")
    else:
        r_both = _nonnegative(r_both, "r_both [s^-1]")
    rates = {"Ix": r_inphase, "2IyS1z": r_first, "2IyS2z": r_second, "4IxS1zS2z": r_both}
    gamma = relaxation_superoperator(system, rates)
    pulsed = ("I", "S1", "S2") if second_inverted else ("I", "S1")
    final = propagate(system, {"Ix": 1.0}, echo(t_s, pulsed), gamma)
    return PartnerAmplitudes(*(amplitude(system, final, name) for name in ("Ix", "2IyS1z", "2IyS2z", "4IxS1zS2z")))


def reference_branch_transfer(
    j1_hz: float,
    j2_hz: float,
    t_s: float,
    *,
    r_inphase: float = 0.0,
    r_first: float = 0.0,
    r_second: float | None = None,
    r_both: float | None = None,
    offset_hz: float = 0.0,
) -> PartnerAmplitudes:
    """One spin I (e.g. N) to two partners S1, S2 (e.g. CA(i) by 1J, CA(i-1) by 2J) over T, from Ix = 1.

    Echo T/2 – 180(I, S1, S2) – T/2: both couplings evolve for T. Rates [s⁻¹]: R(Ix) ``r_inphase``,
    R(2IyS1z) ``r_first``, R(2IyS2z) ``r_second`` (default ``r_first``), R(4IxS1zS2z) ``r_both`` (default
    r_first + r_second − r_inphase, the additive rule). Without relaxation ``first`` is
    sin(πJ1T) cos(πJ2T) and ``second`` cos(πJ1T) sin(πJ2T).
    """
    return _two_partner_echo(
        j1_hz, j2_hz, t_s, r_inphase=r_inphase, r_first=r_first, r_second=r_second, r_both=r_both,
        offset_hz=offset_hz, second_inverted=True,
    )


def reference_homonuclear(
    j_active_hz: float,
    j_passive_hz: float,
    tau_s: float,
    *,
    r_inphase: float = 0.0,
    r_antiphase: float = 0.0,
    r_passive_antiphase: float | None = None,
    r_both: float | None = None,
    passive_inverted: bool = True,
    offset_hz: float = 0.0,
) -> PartnerAmplitudes:
    """Carbon-to-carbon transfer with a passive coupling (e.g. CA → C' with CA–CB), from Ix = 1.

    Spin I (source, e.g. CA) couples to S1 (active partner, e.g. C') and S2 (passive, e.g. CB). Echo
    τ/2 – 180 – τ/2 with the 180 on I and S1, and on S2 when ``passive_inverted`` (a band-selective pulse
    that covers CA also covers CB): then the passive coupling evolves for τ and ``first`` is
    sin(πJaτ) cos(πJpτ); otherwise it is refocused and ``first`` is sin(πJaτ). Rates [s⁻¹]: R(Ix)
    ``r_inphase``, R(2IyS1z) ``r_antiphase``, R(2IyS2z) ``r_passive_antiphase`` (default ``r_antiphase``),
    R(4IxS1zS2z) ``r_both`` (default additive). Fields of the result: ``first`` active anti-phase,
    ``second`` passive anti-phase.

    With additive rates the passive factor is the in-phase amplitude of the 2x2 pair (J_p; 0, e_P),
    e_P = R(2IyS2z) − R(Ix); it reduces to cos(πJpτ) only for ``r_passive_antiphase`` = ``r_inphase``.
    """
    return _two_partner_echo(
        j_active_hz, j_passive_hz, tau_s, r_inphase=r_inphase, r_first=r_antiphase, r_second=r_passive_antiphase,
        r_both=r_both, offset_hz=offset_hz, second_inverted=bool(passive_inverted),
    )


def reference_mq(
    t_s: float,
    *,
    j_active_hz: float = 0.0,
    j_passive_hz: float = 0.0,
    r_mq: float = 0.0,
    r_mq_antiphase: float | None = None,
    passive_inverted: bool = True,
    offset_hz: float = 0.0,
    partner_offset_hz: float = 0.0,
) -> MQAmplitudes:
    """Multiple-quantum period from anti-phase 2IxSz = 1: 90x(S) – t/2 – 180x(I, S[, P]) – t/2 – 90x(S).

    I–S is the active pair (``j_active_hz``, which cannot act on the MQ coherence), P a passive partner
    of I (``j_passive_hz``), inverted by the 180 when ``passive_inverted``. Rates [s⁻¹]: R(2IxSy) of all
    four MQ phases ``r_mq``; R(4IySyPz) ``r_mq_antiphase`` (default ``r_mq``). Without relaxation
    ``antiphase`` (2IxSz) is cos(πJp t) with P inverted and 1 otherwise.
    """
    system = SpinSystem(
        ("I", "S", "P"),
        {("I", "S"): j_active_hz, ("I", "P"): j_passive_hz},
        {"I": offset_hz, "S": partner_offset_hz},
    )
    r_mq = _nonnegative(r_mq, "r_mq [s^-1]")
    r_anti = r_mq if r_mq_antiphase is None else _nonnegative(r_mq_antiphase, "r_mq_antiphase [s^-1]")
    gamma = relaxation_superoperator(system, {"2IxSy": r_mq, "4IySyPz": r_anti})
    refocused = ("I", "S", "P") if passive_inverted else ("I", "S")
    final = propagate(system, {"2IxSz": 1.0}, mq_period(t_s, "S", refocused), gamma)
    return MQAmplitudes(amplitude(system, final, "2IxSz"), amplitude(system, final, "4IySzPz"))


def reference_constant_time(
    total_s: float,
    evolution_s: float,
    *,
    j_hz: float = 0.0,
    offset_hz: float = 0.0,
    r_inphase: float = 0.0,
    r_antiphase: float = 0.0,
    partner_inverted: bool = True,
) -> ConstantTimeAmplitudes:
    """Constant-time period (T−t)/2 – 180(I[, S]) – (T+t)/2 from Ix = 1 on a two-spin system I–S.

    The offset of I [Hz] evolves for t; J(I,S) [Hz] for T when ``partner_inverted`` (passive coupling in a
    constant-time period, e.g. 13C–13C), else for t. Rates [s⁻¹]: R(Ix) ``r_inphase``, R(2IySz)
    ``r_antiphase``. Without relaxation and with S inverted: Ix cos(πJT) cos(2πνt),
    Iy cos(πJT) sin(2πνt), 2IySz sin(πJT) cos(2πνt), 2IxSz −sin(πJT) sin(2πνt).
    """
    system = SpinSystem(("I", "S"), {("I", "S"): j_hz}, {"I": offset_hz})
    rates = {
        "Ix": _nonnegative(r_inphase, "r_inphase [s^-1]"),
        "2IySz": _nonnegative(r_antiphase, "r_antiphase [s^-1]"),
    }
    gamma = relaxation_superoperator(system, rates)
    also = ("S",) if partner_inverted else ()
    final = propagate(system, {"Ix": 1.0}, constant_time_period(total_s, evolution_s, "I", also_pulsed=also), gamma)
    return ConstantTimeAmplitudes(*(amplitude(system, final, name) for name in ("Ix", "Iy", "2IySz", "2IxSz")))
