"""Karplus relation for the three-bond coupling between the amide proton and the alpha proton.

    3J(HN,HA) = A cos²θ + B cos θ + C,    θ = φ + phase,  phase = −60° for L-amino acids

(Karplus, J. Chem. Phys. 30, 11 (1959) for the functional form). The H–N–CA–HA dihedral angle θ relates to the
backbone torsion φ = C(i−1)–N–CA–C by θ = φ − 60° for the single alpha proton of an L-amino acid. The
coefficient sets below were fitted for that proton; glycine's two alpha protons are not covered.

Values are in Hz; angles in degrees at the interface (the trade writes φ in degrees), radians inside.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from backbone.errors import BackboneError

__all__ = [
    "KarplusSet",
    "KARPLUS_HN_HA",
    "DEFAULT_KARPLUS",
    "karplus_set",
    "three_j_hn_ha",
    "three_j_hn_ha_extrema",
]


@dataclass(frozen=True)
class KarplusSet:
    """One published set of Karplus coefficients for 3J(HN,HA).

    ``a_hz``, ``b_hz``, ``c_hz`` [Hz] multiply cos²θ, cos θ and 1; ``phase_deg`` [deg] is added to φ to give θ.
    """

    name: str
    a_hz: float
    b_hz: float
    c_hz: float
    phase_deg: float
    source: str


#: Published coefficient sets, by name. The default is Vuister & Bax 1993.
KARPLUS_HN_HA: Mapping[str, KarplusSet] = MappingProxyType(
    {
        "vuister-bax-1993": KarplusSet(
            "vuister-bax-1993",
            6.51,
            -1.76,
            1.60,
            -60.0,
            "Vuister & Bax, J. Am. Chem. Soc. 115, 7772-7777 (1993), from HNHA data of staphylococcal nuclease "
            "(from memory)",
        ),
        "pardi-1984": KarplusSet(
            "pardi-1984",
            6.4,
            -1.4,
            1.9,
            -60.0,
            "Pardi, Billeter & Wüthrich, J. Mol. Biol. 180, 741-751 (1984), BPTI crystal-structure angles "
            "(from memory)",
        ),
    }
)

#: Name of the coefficient set used when none is given.
DEFAULT_KARPLUS = "vuister-bax-1993"


def karplus_set(coefficients: str | KarplusSet = DEFAULT_KARPLUS) -> KarplusSet:
    """Resolve ``coefficients`` (a name in :data:`KARPLUS_HN_HA` or a :class:`KarplusSet`) to a set."""
    if isinstance(coefficients, KarplusSet):
        return coefficients
    try:
        return KARPLUS_HN_HA[coefficients]
    except (KeyError, TypeError) as err:
        raise BackboneError(
            f"Karplus coefficients {coefficients!r} are unknown; known sets: {', '.join(KARPLUS_HN_HA)} "
            "(or pass a KarplusSet)"
        ) from err


def three_j_hn_ha(phi_deg, *, coefficients: str | KarplusSet = DEFAULT_KARPLUS):
    """3J(HN,HA) [Hz] of an L-amino acid from its backbone torsion φ.

    Parameters
    ----------
    phi_deg : float or array [deg]
        Backbone torsion φ (C(i−1)–N–CA–C). NaN gives NaN (unknown φ).
    coefficients : str or KarplusSet
        Name of a set in :data:`KARPLUS_HN_HA` (default ``"vuister-bax-1993"``) or a :class:`KarplusSet`.

    Returns
    -------
    float or ndarray [Hz], same shape as ``phi_deg``; a float for scalar input.
    """
    k = karplus_set(coefficients)
    phi = np.asarray(phi_deg, dtype=float)
    cos_t = np.cos(np.deg2rad(phi + k.phase_deg))
    j = k.a_hz * cos_t**2 + k.b_hz * cos_t + k.c_hz
    return float(j) if j.ndim == 0 else j


def three_j_hn_ha_extrema(coefficients: str | KarplusSet = DEFAULT_KARPLUS) -> tuple[float, float]:
    """(smallest, largest) 3J(HN,HA) [Hz] the curve reaches over all φ.

    With x = cos θ in [−1, 1] the curve is the parabola A x² + B x + C: its extremes lie at x = ±1 or at the
    vertex x = −B/(2A) when that falls inside [−1, 1].
    """
    k = karplus_set(coefficients)
    xs = [-1.0, 1.0]
    if k.a_hz != 0.0 and abs(k.b_hz / (2.0 * k.a_hz)) <= 1.0:
        xs.append(-k.b_hz / (2.0 * k.a_hz))
    values = [k.a_hz * x * x + k.b_hz * x + k.c_hz for x in xs]
    return (min(values), max(values))
