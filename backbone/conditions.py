"""Sample conditions: what the relaxation engine needs, resolved once from what the user gave.

A :class:`Conditions` holds SI values only (τc in s, temperature in K, field as the 1H frequency in MHz, which
is how spectroscopists name magnets). :func:`resolve_conditions` is the single place that decides where τc
comes from: a τc the user gives wins over an estimate from the protein's size, and the record says which was
used (``tau_c_source``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from backbone.errors import BackboneError
from backbone.units import FIELD_MHZ, S2, TAU_C_NS, TAU_E_NS, celsius_to_kelvin

__all__ = ["Conditions", "resolve_conditions", "compute_rates"]


@dataclass(frozen=True)
class Conditions:
    """Resolved sample and spectrometer conditions (SI).

    tau_c : float [s]
    proton_mhz : float [MHz] 1H Larmor frequency of the magnet
    labeling : LabelingScheme
    temperature_k : float [K]
    solvent : "H2O" or "D2O"
    s2, tau_e : model-free order parameter [1] and internal correlation time [s]; s2 = 1 is rigid
    tau_c_source : "given" or a sentence saying how it was estimated
    mass_da : float or None [Da], when known
    """

    tau_c: float
    proton_mhz: float
    labeling: object
    temperature_k: float
    solvent: str = "H2O"
    s2: float = 1.0
    tau_e: float = 0.0
    tau_c_source: str = "given"
    mass_da: float | None = None
    tumbling: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        """The ``conditions`` object of the JSON contract (user units: ns, MHz, K)."""
        out = {
            "tau_c_ns": self.tau_c * 1e9,
            "tau_c_source": self.tau_c_source,
            "field_mhz": self.proton_mhz,
            "labeling": self.labeling.id,
            "deuteration": self.labeling.deuteration,
            "temperature_k": self.temperature_k,
            "solvent": self.solvent,
            "s2": self.s2,
            "tau_e_ns": self.tau_e * 1e9,
            "spectral_density": "rigid isotropic" if self.s2 == 1.0 else "model-free",
        }
        if self.mass_da is not None:
            out["mass_kda"] = self.mass_da / 1e3
        if self.tumbling:
            out["tumbling"] = dict(self.tumbling)
        return out


def resolve_conditions(
    *,
    tau_c_ns: float | None = None,
    sequence: str | None = None,
    mass_kda: float | None = None,
    proton_mhz: float = 600.0,
    labeling: str = "13c15n",
    deuteration: float | None = None,
    temperature_k: float = celsius_to_kelvin(25.0),
    solvent: str = "H2O",
    s2: float = 1.0,
    tau_e_ns: float = 0.0,
    where: str = "",
) -> Conditions:
    """Build :class:`Conditions` from user-unit inputs, validating each against its range.

    τc comes from ``tau_c_ns`` when given; otherwise from ``sequence`` (one-letter, parsed) or ``mass_kda``
    through Stokes–Einstein–Debye with a hydration shell at ``temperature_k`` in ``solvent``.
    """
    from backbone.labeling import load_scheme

    pre = f"{where}: " if where else ""
    FIELD_MHZ.check(proton_mhz, where=where)
    S2.check(s2, where=where)
    TAU_E_NS.check(tau_e_ns, where=where)
    scheme = load_scheme(labeling, deuteration=deuteration)

    mass_da = None
    if sequence is not None:
        from backbone.graph import parse_sequence, residue_mass_da

        mass_da = residue_mass_da(parse_sequence(sequence, where=where or "sequence"))
    elif mass_kda is not None:
        if not mass_kda > 0:
            raise BackboneError(f"{pre}mass = {mass_kda!r} kDa must be > 0")
        mass_da = float(mass_kda) * 1e3

    tumbling: dict = {}
    if tau_c_ns is not None:
        TAU_C_NS.check(tau_c_ns, where=where)
        tau_c = float(tau_c_ns) * 1e-9
        source = "given"
    elif mass_da is not None:
        from backbone.relaxation.tumbling import tau_c_from_mass  # iapws: imported only when estimating

        tau_c = float(tau_c_from_mass(mass_da, temperature_k, solvent=solvent))
        source = f"estimated from {mass_da / 1e3:.1f} kDa at {temperature_k:.2f} K in {solvent} (Stokes-Einstein-Debye)"
        try:
            TAU_C_NS.check(tau_c * 1e9, where=where)
        except BackboneError as err:
            raise BackboneError(f"{pre}the tau_c estimated from the size falls outside the model's range: {err}") from err
    else:
        raise BackboneError(f"{pre}give tau_c, or a sequence or mass to estimate it from")

    return Conditions(
        tau_c=tau_c,
        proton_mhz=float(proton_mhz),
        labeling=scheme,
        temperature_k=float(temperature_k),
        solvent=solvent,
        s2=float(s2),
        tau_e=float(tau_e_ns) * 1e-9,
        tau_c_source=source,
        mass_da=mass_da,
        tumbling=tumbling,
    )


def compute_rates(conditions: Conditions, *, rex=None, environment=None):
    """The engine's :class:`RateSet` for resolved ``conditions``."""
    from backbone.relaxation import relaxation_rates

    return relaxation_rates(
        conditions.tau_c,
        proton_mhz=conditions.proton_mhz,
        labeling=conditions.labeling,
        s2=conditions.s2,
        tau_e=conditions.tau_e,
        rex=rex,
        environment=environment,
    )
