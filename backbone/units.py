"""Unit conversion at the edge and the valid ranges of user-facing quantities.

Inside the package everything is SI (s, Hz, s⁻¹, T, K, m). Users give τc in ns, delays in ms, the field as
the 1H frequency in MHz (or B0 in T) and temperature in °C or K; the CLI and file readers convert once, here,
and check the value against its valid range. Messages name the quantity, where it came from and the range.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from backbone.errors import BackboneError

__all__ = [
    "ValidRange",
    "TAU_C_NS",
    "FIELD_MHZ",
    "TEMPERATURE_C",
    "S2",
    "TAU_E_NS",
    "ZERO_CELSIUS_K",
    "ns_to_s",
    "ms_to_s",
    "celsius_to_kelvin",
    "kelvin_to_celsius",
    "temperature_to_kelvin",
]

#: 0 °C in kelvin (ITS-90 definition, exact).
ZERO_CELSIUS_K = 273.15


@dataclass(frozen=True)
class ValidRange:
    """A closed range a quantity must lie in, in the unit users write it in."""

    name: str
    low: float
    high: float
    unit: str
    low_inclusive: bool = True

    def check(self, value, *, where: str = ""):
        """Return ``value`` (float or array) unchanged, or raise :class:`BackboneError` naming it."""
        arr = np.asarray(value, dtype=float)
        prefix = f"{where}: " if where else ""
        if not np.all(np.isfinite(arr)):
            raise BackboneError(f"{prefix}{self.name} must be a finite number, got {value!r}")
        below = arr < self.low if self.low_inclusive else arr <= self.low
        if np.any(below) or np.any(arr > self.high):
            bad = arr[below | (arr > self.high)].ravel()[0]
            lo = "[" if self.low_inclusive else "("
            raise BackboneError(
                f"{prefix}{self.name} = {bad:g} {self.unit} is outside the allowed range "
                f"{lo}{self.low:g}, {self.high:g}] {self.unit}"
            )
        return value


TAU_C_NS = ValidRange("tau_c", 0.1, 500.0, "ns")
FIELD_MHZ = ValidRange("field (1H frequency)", 100.0, 1500.0, "MHz")
TEMPERATURE_C = ValidRange("temperature", 0.0, 80.0, "°C")
S2 = ValidRange("S2 (order parameter)", 0.0, 1.0, "")
TAU_E_NS = ValidRange("tau_e (internal correlation time)", 0.0, 10.0, "ns")


def ns_to_s(x):
    """Nanoseconds → seconds."""
    return np.asarray(x, dtype=float) * 1e-9 if np.ndim(x) else float(x) * 1e-9


def ms_to_s(x):
    """Milliseconds → seconds."""
    return np.asarray(x, dtype=float) * 1e-3 if np.ndim(x) else float(x) * 1e-3


def celsius_to_kelvin(t_c):
    """°C → K."""
    return t_c + ZERO_CELSIUS_K


def kelvin_to_celsius(t_k):
    """K → °C."""
    return t_k - ZERO_CELSIUS_K


def temperature_to_kelvin(text_or_value, *, where: str = "temperature") -> float:
    """Parse a user temperature: a number is °C, a string may end in ``C`` or ``K`` (``25``, ``25C``, ``298.15K``).

    The result is checked against the valid range 0–80 °C and returned in kelvin.
    """
    if isinstance(text_or_value, str):
        s = text_or_value.strip().upper().replace("°", "")
        unit = "C"
        if s.endswith("K"):
            unit, s = "K", s[:-1]
        elif s.endswith("C"):
            s = s[:-1]
        try:
            value = float(s)
        except ValueError as err:
            raise BackboneError(
                f"{where}: {text_or_value!r} is not a temperature (write e.g. 25, 25C or 298.15K)"
            ) from err
    else:
        value, unit = float(text_or_value), "C"
    t_c = value if unit == "C" else kelvin_to_celsius(value)
    TEMPERATURE_C.check(t_c, where=where)
    return celsius_to_kelvin(t_c)
