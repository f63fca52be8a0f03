"""Relaxation: spectral densities, Redfield terms, the geometry of nearby spins and the rate engine.

Public API
----------
- :func:`spectral_density` – model-free J(ω) with the 2/5 factor (:mod:`~backbone.relaxation.spectral`).
- :mod:`~backbone.relaxation.terms` – the dipolar, like-spin, CSA and cross-correlation rate expressions.
- :data:`DEFAULT_ENVIRONMENT`, :data:`ENVIRONMENTS`, :class:`Partner`, :func:`validate_environment` – typical
  geometry of the dipolar partners of each nucleus (:mod:`~backbone.relaxation.environment`).
- :func:`relaxation_rates` → :class:`RateSet` – rates of every labeled nucleus and of the coherences the
  transfer steps use, vectorized over τc and field (:mod:`~backbone.relaxation.engine`).
- :func:`solvent_viscosity`, :func:`tau_c_from_mass` – tumbling (:mod:`~backbone.relaxation.tumbling`).
  They are resolved on first use, so importing the rate engine stays numpy/scipy only
  (the tumbling module loads iapws, which takes about half a second).
"""

import importlib

from backbone.relaxation.engine import COHERENCES, NUCLEUS_RATES, RateSet, relaxation_rates
from backbone.relaxation.environment import (
    DEFAULT_ENVIRONMENT,
    ENVIRONMENTS,
    NUCLEI,
    Partner,
    validate_environment,
)
from backbone.relaxation.spectral import rigid_spectral_density, spectral_density

__all__ = [
    "spectral_density",
    "rigid_spectral_density",
    "relaxation_rates",
    "RateSet",
    "COHERENCES",
    "NUCLEUS_RATES",
    "NUCLEI",
    "Partner",
    "ENVIRONMENTS",
    "DEFAULT_ENVIRONMENT",
    "validate_environment",
]

_TUMBLING_NAMES = ("solvent_viscosity", "tau_c_from_mass")
__all__ += list(_TUMBLING_NAMES)


def __getattr__(name):
    # Lazy re-export of the tumbling functions (PEP 562): iapws is imported only when they are used.
    if name in _TUMBLING_NAMES:
        return getattr(importlib.import_module("backbone.relaxation.tumbling"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
