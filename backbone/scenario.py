"""Scenario files: a spectroscopist's planning question, read from TOML into frozen, validated records.

A scenario says what protein is in the tube (``[protein]``), under which conditions (``[sample]``), on which
magnets (``[spectrometer]``, optionally with one measured reference point in ``[spectrometer.calibration]``),
which labeling schemes and experiments are on the table (``[candidates]``) and what the data must achieve
(``[goals]``). Every key, its type, unit, default and allowed range is documented in one place,
``scenarios/README.md``; ``scenarios/example-annotated.toml`` uses every key.

Reading is strict. An unknown or misspelled key is an error naming the file, the table and the key, with the
closest valid key suggested; a wrong type or an out-of-range value is one line naming the file, the key, the
value and the allowed range; a missing required key or table is named. Relative paths (``sequence_file``) are
resolved against the folder of the scenario file.

Each record (:class:`Protein`, :class:`Sample`, :class:`Spectrometer`, :class:`Calibration`,
:class:`LabelingChoice`, :class:`Candidates`, :class:`Goals`, :class:`Scenario`) is a frozen dataclass that
validates its own values on construction, so records built in Python get the same checks and messages as those
read from a file. Values are kept in the units the keys name (mM, MHz, ns, h); the one exception is the
temperature, which is stored in kelvin (``temperature_k``) whichever of ``temperature_c`` or
``temperature_k`` the file gave, and offered in °C as the ``temperature_c`` property.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType

from backbone.constants import Constant
from backbone.errors import BackboneError
from backbone.tomlfile import closest, read_toml
from backbone.graph import parse_sequence, residue_mass_da
from backbone.units import (
    FIELD_MHZ,
    S2,
    TAU_C_NS,
    TAU_E_NS,
    TEMPERATURE_C,
    ZERO_CELSIUS_K,
    ValidRange,
    celsius_to_kelvin,
    kelvin_to_celsius,
)

__all__ = [
    "AVERAGE_RESIDUE_MASS",
    "SOLVENTS",
    "PROBES",
    "RESOLUTION_NUCLEI",
    "SCENARIO_KEYS",
    "LabelingChoice",
    "Protein",
    "Sample",
    "Calibration",
    "Spectrometer",
    "Candidates",
    "Goals",
    "Scenario",
    "load_scenario",
]

#: Mass of an average amino-acid residue, for a protein known only by its length.
AVERAGE_RESIDUE_MASS = Constant(
    "average amino-acid residue mass", 110.0, "Da", "rule of thumb for proteins (common practice)"
)

#: ``Protein.mass_source`` of a protein known by its length.
_LENGTH_MASS_SOURCE = f"length x {AVERAGE_RESIDUE_MASS.value:g} Da"

#: Allowed solvents (``sample.solvent``), as written in output.
SOLVENTS = ("H2O", "D2O")
#: Allowed probe kinds (``spectrometer.probe``).
PROBES = ("cryogenic", "room-temperature")
#: Nuclei whose indirect-dimension resolution a scenario may ask for (``[goals.resolution_hz]``).
RESOLUTION_NUCLEI = ("N", "C", "CA", "CB", "HA")
#: Allowed ``candidates.trosy`` values besides true/false.
_TROSY_AUTO = "auto"

# ---------------------------------------------------------------------------------------------------------
# Allowed ranges (user units). Ranges of quantities other modules share come from backbone.units.
# ---------------------------------------------------------------------------------------------------------

_MAX_RESIDUES = 10_000
_RESIDUES = ValidRange("length", 1, _MAX_RESIDUES, "residues")
_MASS_KDA = ValidRange("mass", 0.0, _MAX_RESIDUES * AVERAGE_RESIDUE_MASS.value / 1e3, "kDa", low_inclusive=False)
_CONCENTRATION_MM = ValidRange("concentration", 0.0, 10.0, "mM", low_inclusive=False)
_TEMPERATURE_K = ValidRange(
    "temperature", TEMPERATURE_C.low + ZERO_CELSIUS_K, TEMPERATURE_C.high + ZERO_CELSIUS_K, "K"
)
_VOLUME_UL = ValidRange("volume", 0.0, 5000.0, "µL", low_inclusive=False)
_POSITIVE = ValidRange("positive number", 0.0, math.inf, "", low_inclusive=False)
_FRACTION = ValidRange("fraction", 0.0, 1.0, "")
_DUTY = ValidRange("duty cycle", 0.0, 1.0, "", low_inclusive=False)
_RECYCLE_S = ValidRange("recycle delay", 0.0, 10.0, "s", low_inclusive=False)
_RESOLUTION_HZ = ValidRange("resolution", 1.0, 1000.0, "Hz")

# ---------------------------------------------------------------------------------------------------------
# Keys of every table (the loader's whitelist; scenarios/README.md documents each)
# ---------------------------------------------------------------------------------------------------------

_PROTEIN_SIZE_KEYS = ("sequence", "sequence_file", "length", "mass_kda")
_KEYS: dict[str, tuple[str, ...]] = {
    "": ("description", "protein", "sample", "spectrometer", "candidates", "goals"),
    "protein": ("name", *_PROTEIN_SIZE_KEYS, "tau_c_ns", "s2", "tau_e_ns"),
    "sample": ("concentration_mm", "temperature_c", "temperature_k", "solvent", "volume_ul"),
    "spectrometer": ("fields_mhz", "probe", "calibration"),
    "spectrometer.calibration": (
        "experiment",
        "trosy",
        "signal_to_noise",
        "time_min",
        "field_mhz",
        "labeling",
        "concentration_mm",
        "temperature_c",
        "temperature_k",
    ),
    "candidates": ("labeling", "experiments", "trosy"),
    "goals": ("target_signal_to_noise", "time_budget_h", "resolution_hz", "recycle_delay_s", "high_power_duty_limit"),
    "goals.resolution_hz": RESOLUTION_NUCLEI,
}
_LABELING_ENTRY_KEYS = ("scheme", "deuteration")

#: Every valid key, by table (dotted name; "" is the top level; "labeling entry" is the inline-table form of a
#: labeling choice). scenarios/README.md documents each.
SCENARIO_KEYS: Mapping[str, tuple[str, ...]] = MappingProxyType({**_KEYS, "labeling entry": _LABELING_ENTRY_KEYS})
_TOP_TABLES = ("protein", "sample", "spectrometer", "candidates", "goals")
_REQUIRED = {
    "protein": ("name",),
    "sample": ("concentration_mm",),
    "spectrometer": ("fields_mhz", "probe"),
    "spectrometer.calibration": ("experiment", "signal_to_noise", "time_min", "field_mhz", "labeling"),
    "candidates": ("labeling", "experiments"),
    "goals": ("target_signal_to_noise", "time_budget_h"),
}


# ---------------------------------------------------------------------------------------------------------
# Value checks shared by the records
# ---------------------------------------------------------------------------------------------------------


def _prefix(source: str) -> str:
    return f"{source}: " if source else ""


def _range_text(rng: ValidRange) -> str:
    unit = f" {rng.unit}" if rng.unit else ""
    if math.isinf(rng.high):
        return f"{'>=' if rng.low_inclusive else '>'} {rng.low:g}{unit}"
    return f"{'[' if rng.low_inclusive else '('}{rng.low:g}, {rng.high:g}]{unit}"


def _is_number(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _number(value, key: str, rng: ValidRange, source: str) -> float:
    """``value`` as a float, or a one-line :class:`BackboneError` naming source, key, value and range."""
    pre = _prefix(source)
    allowed = _range_text(rng)
    in_range = allowed if math.isinf(rng.high) else f"in {allowed}"
    if not _is_number(value):
        raise BackboneError(f"{pre}{key} = {value!r} is not a number; allowed: a number {in_range}")
    if not math.isfinite(value):
        raise BackboneError(f"{pre}{key} = {value!r} is not a finite number; allowed: a number {in_range}")
    below = value < rng.low if rng.low_inclusive else value <= rng.low
    if below or value > rng.high:
        if math.isinf(rng.high):
            raise BackboneError(f"{pre}{key} = {value!r} is not allowed; it must be {allowed}")
        raise BackboneError(f"{pre}{key} = {value!r} is outside the allowed range {allowed}")
    return float(value)


def _optional_number(value, key: str, rng: ValidRange, source: str) -> float | None:
    return None if value is None else _number(value, key, rng, source)


def _whole_number(value, key: str, rng: ValidRange, source: str) -> int:
    pre = _prefix(source)
    if not isinstance(value, int) or isinstance(value, bool):
        raise BackboneError(
            f"{pre}{key} = {value!r} is not a whole number; allowed: a whole number in {_range_text(rng)}"
        )
    _number(value, key, rng, source)
    return int(value)


def _line(value, key: str, source: str, what: str = "a non-empty one-line text") -> str:
    """A non-empty single-line string, stripped."""
    if not isinstance(value, str) or not value.strip() or "\n" in value.strip():
        raise BackboneError(f"{_prefix(source)}{key} = {value!r} is not allowed; give {what}")
    return value.strip()


def _choice(value, key: str, allowed: Sequence[str], source: str) -> str:
    """``value`` matched case-insensitively against ``allowed``; returns the allowed spelling."""
    hint = ""
    if isinstance(value, str):
        for option in allowed:
            if value.strip().lower() == option.lower():
                return option
        close = closest(value.strip(), allowed)
        hint = f" (did you mean {close!r}?)" if close else ""
    raise BackboneError(
        f"{_prefix(source)}{key} = {value!r} is not allowed{hint}; allowed values: {', '.join(map(repr, allowed))}"
    )


def _registered_schemes():
    """The bundled labeling schemes by id, or None while :mod:`backbone.labeling` cannot be imported."""
    try:
        from backbone.labeling import registered_schemes
    except ImportError:
        return None
    return registered_schemes()


# ---------------------------------------------------------------------------------------------------------
# Records
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class LabelingChoice:
    """One labeling scheme to consider: a bundled scheme id and, optionally, its deuteration level.

    scheme : str
        Id of a bundled scheme (``backbone.labeling.registered_schemes()``), matched case-insensitively and
        stored as registered. Checked only while :mod:`backbone.labeling` imports.
    deuteration : float or None [fraction of one]
        2H level at the non-exchangeable hydrogen sites; None keeps the scheme's default. Only schemes whose
        level is adjustable accept it, inside their range.
    key : the dotted key the choice was read from, used in messages (``candidates.labeling[2]``).
    """

    scheme: str
    deuteration: float | None = None
    source: str = field(default="", compare=False, repr=False)
    key: str = field(default="labeling", compare=False, repr=False)

    def __post_init__(self):
        pre = _prefix(self.source)
        scheme = _line(self.scheme, self.key, self.source, "a labeling scheme id such as '13c15n'")
        level = _optional_number(self.deuteration, f"{self.key}.deuteration", _FRACTION, self.source)
        known = _registered_schemes()
        if known is not None:
            by_lower = {sid.lower(): sid for sid in known}
            if scheme.lower() not in by_lower:
                close = closest(scheme, list(known))
                hint = f" (did you mean {close!r}?)" if close else ""
                raise BackboneError(
                    f"{pre}{self.key} = {scheme!r} is not a registered labeling scheme{hint}; "
                    f"registered: {', '.join(known)}"
                )
            scheme = by_lower[scheme.lower()]
            if level is not None:
                try:
                    known[scheme].with_deuteration(level)
                except BackboneError as err:
                    raise BackboneError(f"{pre}{self.key}.deuteration = {self.deuteration!r}: {err}") from err
        object.__setattr__(self, "scheme", scheme)
        object.__setattr__(self, "deuteration", level)

    def load(self):
        """The :class:`backbone.labeling.LabelingScheme` this choice names, at its deuteration level."""
        from backbone.labeling import load_scheme

        return load_scheme(self.scheme, deuteration=self.deuteration)

    def as_dict(self) -> dict:
        """``{"scheme", "deuteration"}`` (deuteration None = the scheme's default)."""
        return {"scheme": self.scheme, "deuteration": self.deuteration}

    def __str__(self) -> str:
        return self.scheme if self.deuteration is None else f"{self.scheme} (deuteration {self.deuteration:g})"


def _as_labeling_choice(value, key: str, source: str) -> LabelingChoice:
    if isinstance(value, LabelingChoice):
        return value
    if isinstance(value, str):
        return LabelingChoice(value, source=source, key=key)
    raise BackboneError(
        f"{_prefix(source)}{key} = {value!r} is not allowed; give a scheme id such as \"13c15n\" or "
        f"{{ scheme = \"2h13c15n\", deuteration = 0.95 }}"
    )


@dataclass(frozen=True)
class Protein:
    """The protein: a name and its size, given in exactly one way, plus optional tumbling parameters.

    Size (exactly one of):
        sequence : str — one-letter sequence (plain or FASTA text), read with
        :func:`backbone.graph.parse_sequence`;
        sequence_file : str or Path — a plain or FASTA file holding it (relative paths are taken from the
        current folder here; :func:`load_scenario` makes them relative to the scenario file);
        length : int [residues];
        mass_kda : float [kDa].
    tau_c_ns : float or None [ns] — rotational correlation time; when given it wins over an estimate from size.
    s2 : float [1] — model-free order parameter (1 = rigid); tau_e_ns : float [ns] — internal correlation time.

    Derived on construction:
        sequence_text : str or None — the parsed upper-case sequence;
        mass_da : float [Da] — from the sequence (:func:`backbone.graph.residue_mass_da`), from the length ×
        :data:`AVERAGE_RESIDUE_MASS`, or the given mass;
        mass_source : ``"sequence"``, ``"length x 110 Da"`` or ``"mass_kda"`` — which of these it was.
    """

    name: str
    sequence: str | None = None
    sequence_file: str | Path | None = None
    length: int | None = None
    mass_kda: float | None = None
    tau_c_ns: float | None = None
    s2: float = 1.0
    tau_e_ns: float = 0.0
    source: str = field(default="", compare=False, repr=False)
    sequence_text: str | None = field(init=False, default=None, repr=False)
    mass_da: float = field(init=False, default=math.nan)
    mass_source: str = field(init=False, default="")

    def __post_init__(self):
        pre, src = _prefix(self.source), self.source
        object.__setattr__(self, "name", _line(self.name, "protein.name", src))
        given = [k for k in _PROTEIN_SIZE_KEYS if getattr(self, k) is not None]
        if len(given) != 1:
            which = "none is given" if not given else "it gives " + " and ".join(f"protein.{k}" for k in given)
            raise BackboneError(
                f"{pre}[protein] needs exactly one of {', '.join(_PROTEIN_SIZE_KEYS)}; {which}"
            )
        (kind,) = given
        seq = None
        if kind == "sequence":
            if not isinstance(self.sequence, str):
                raise BackboneError(
                    f"{pre}protein.sequence = {self.sequence!r} is not allowed; give the one-letter sequence as text"
                )
            seq = parse_sequence(self.sequence, where=f"{pre}protein.sequence")
        elif kind == "sequence_file":
            seq, path = self._read_sequence_file()
            object.__setattr__(self, "sequence_file", path)
        if seq is not None:
            if len(seq) > _MAX_RESIDUES:
                raise BackboneError(
                    f"{pre}protein.{kind}: the sequence has {len(seq)} residues; at most {_MAX_RESIDUES} are allowed"
                )
            mass_da, mass_source = residue_mass_da(seq), "sequence"
        elif kind == "length":
            n = _whole_number(self.length, "protein.length", _RESIDUES, src)
            object.__setattr__(self, "length", n)
            mass_da, mass_source = n * AVERAGE_RESIDUE_MASS.value, _LENGTH_MASS_SOURCE
        else:
            kda = _number(self.mass_kda, "protein.mass_kda", _MASS_KDA, src)
            object.__setattr__(self, "mass_kda", kda)
            mass_da, mass_source = kda * 1e3, "mass_kda"
        object.__setattr__(self, "sequence_text", seq)
        object.__setattr__(self, "mass_da", float(mass_da))
        object.__setattr__(self, "mass_source", mass_source)
        object.__setattr__(self, "tau_c_ns", _optional_number(self.tau_c_ns, "protein.tau_c_ns", TAU_C_NS, src))
        object.__setattr__(self, "s2", _number(self.s2, "protein.s2", S2, src))
        object.__setattr__(self, "tau_e_ns", _number(self.tau_e_ns, "protein.tau_e_ns", TAU_E_NS, src))

    def _read_sequence_file(self) -> tuple[str, Path]:
        pre = _prefix(self.source)
        if not isinstance(self.sequence_file, (str, Path)) or not str(self.sequence_file).strip():
            raise BackboneError(
                f"{pre}protein.sequence_file = {self.sequence_file!r} is not allowed; give the path of a "
                f"plain or FASTA sequence file"
            )
        path = Path(self.sequence_file).absolute()
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as err:
            raise BackboneError(
                f"{pre}protein.sequence_file: cannot read {path} ({err.strerror or err})"
            ) from err
        except UnicodeDecodeError as err:
            raise BackboneError(f"{pre}protein.sequence_file: {path} is not UTF-8 text") from err
        where = f"{path} (protein.sequence_file of {self.source})" if self.source else f"{path} (protein.sequence_file)"
        return parse_sequence(text, where=where), path

    @property
    def residue_count(self) -> int | None:
        """Number of residues, from the sequence or the length; None when only the mass is known."""
        return len(self.sequence_text) if self.sequence_text is not None else self.length

    def as_dict(self) -> dict:
        """JSON-friendly summary in user units (kDa, ns)."""
        return {
            "name": self.name,
            "sequence": self.sequence_text,
            "sequence_file": None if self.sequence_file is None else str(self.sequence_file),
            "length": self.residue_count,
            "mass_kda": self.mass_da / 1e3,
            "mass_source": self.mass_source,
            "tau_c_ns": self.tau_c_ns,
            "s2": self.s2,
            "tau_e_ns": self.tau_e_ns,
        }


@dataclass(frozen=True)
class Sample:
    """The NMR sample.

    concentration_mm : float [mM], 0 < c <= 10
    temperature_k : float [K], 273.15-353.15 (0-80 °C); the file may give temperature_c instead
    solvent : "H2O" or "D2O" (case-insensitive on input)
    volume_ul : float or None [µL]
    """

    concentration_mm: float
    temperature_k: float
    solvent: str = "H2O"
    volume_ul: float | None = None
    source: str = field(default="", compare=False, repr=False)

    def __post_init__(self):
        src = self.source
        conc = _number(self.concentration_mm, "sample.concentration_mm", _CONCENTRATION_MM, src)
        object.__setattr__(self, "concentration_mm", conc)
        temp = _number(self.temperature_k, "sample.temperature_k", _TEMPERATURE_K, src)
        object.__setattr__(self, "temperature_k", temp)
        object.__setattr__(self, "solvent", _choice(self.solvent, "sample.solvent", SOLVENTS, src))
        object.__setattr__(self, "volume_ul", _optional_number(self.volume_ul, "sample.volume_ul", _VOLUME_UL, src))

    @property
    def temperature_c(self) -> float:
        """Sample temperature [°C]."""
        return kelvin_to_celsius(self.temperature_k)

    def as_dict(self) -> dict:
        """JSON-friendly summary in user units (mM, °C and K, µL)."""
        return {
            "concentration_mm": self.concentration_mm,
            "temperature_c": self.temperature_c,
            "temperature_k": self.temperature_k,
            "solvent": self.solvent,
            "volume_ul": self.volume_ul,
        }


@dataclass(frozen=True)
class Calibration:
    """One measured reference point: the signal-to-noise an experiment gave in a known time.

    experiment : str — experiment name, stored upper case (validated later against the experiment registry)
    trosy : bool — whether the reference was the TROSY variant
    signal_to_noise : float [1] — peak height over RMS noise, > 0
    time_min : float [min] — measurement time it took, > 0
    field_mhz : float [MHz] — 1H frequency of the magnet; must be one of the spectrometer's fields_mhz
    labeling : LabelingChoice (or a scheme id) of the reference sample
    concentration_mm : float or None [mM] — None: same as the sample (filled in by :class:`Scenario`)
    temperature_k : float or None [K] — None: same as the sample (filled in by :class:`Scenario`)
    """

    experiment: str
    signal_to_noise: float
    time_min: float
    field_mhz: float
    labeling: LabelingChoice | str
    trosy: bool = False
    concentration_mm: float | None = None
    temperature_k: float | None = None
    source: str = field(default="", compare=False, repr=False)

    def __post_init__(self):
        src, key = self.source, "spectrometer.calibration"
        experiment = _line(self.experiment, f"{key}.experiment", src, "an experiment name such as 'HSQC'")
        object.__setattr__(self, "experiment", experiment.upper())
        if not isinstance(self.trosy, bool):
            raise BackboneError(f"{_prefix(src)}{key}.trosy = {self.trosy!r} is not allowed; give true or false")
        object.__setattr__(
            self, "signal_to_noise", _number(self.signal_to_noise, f"{key}.signal_to_noise", _POSITIVE, src)
        )
        object.__setattr__(self, "time_min", _number(self.time_min, f"{key}.time_min", _POSITIVE, src))
        object.__setattr__(self, "field_mhz", _number(self.field_mhz, f"{key}.field_mhz", FIELD_MHZ, src))
        object.__setattr__(self, "labeling", _as_labeling_choice(self.labeling, f"{key}.labeling", src))
        object.__setattr__(
            self,
            "concentration_mm",
            _optional_number(self.concentration_mm, f"{key}.concentration_mm", _CONCENTRATION_MM, src),
        )
        object.__setattr__(
            self, "temperature_k", _optional_number(self.temperature_k, f"{key}.temperature_k", _TEMPERATURE_K, src)
        )

    @property
    def temperature_c(self) -> float | None:
        """Temperature of the reference measurement [°C], or None if not (yet) known."""
        return None if self.temperature_k is None else kelvin_to_celsius(self.temperature_k)

    def as_dict(self) -> dict:
        """JSON-friendly summary in user units (min, MHz, mM, °C and K)."""
        return {
            "experiment": self.experiment,
            "trosy": self.trosy,
            "signal_to_noise": self.signal_to_noise,
            "time_min": self.time_min,
            "field_mhz": self.field_mhz,
            "labeling": self.labeling.as_dict(),
            "concentration_mm": self.concentration_mm,
            "temperature_c": self.temperature_c,
            "temperature_k": self.temperature_k,
        }


@dataclass(frozen=True)
class Spectrometer:
    """The magnets available and the probe.

    fields_mhz : tuple of float [MHz] — 1H frequencies, each 100-1500, no duplicates, order kept
    probe : "cryogenic" or "room-temperature"
    calibration : Calibration or None — its field_mhz must be one of fields_mhz
    """

    fields_mhz: tuple[float, ...]
    probe: str
    calibration: Calibration | None = None
    source: str = field(default="", compare=False, repr=False)

    def __post_init__(self):
        pre, src = _prefix(self.source), self.source
        raw = self.fields_mhz
        if isinstance(raw, (str, bytes)) or not isinstance(raw, Sequence) or not raw:
            raise BackboneError(
                f"{pre}spectrometer.fields_mhz = {raw!r} is not allowed; give a non-empty list of 1H frequencies "
                f"in MHz, each {_range_text(FIELD_MHZ)}, e.g. [600, 800]"
            )
        fields = tuple(_number(f, "spectrometer.fields_mhz", FIELD_MHZ, src) for f in raw)
        repeated = sorted({f for f in fields if fields.count(f) > 1})
        if repeated:
            raise BackboneError(f"{pre}spectrometer.fields_mhz lists {repeated[0]:g} MHz more than once")
        object.__setattr__(self, "fields_mhz", fields)
        object.__setattr__(self, "probe", _choice(self.probe, "spectrometer.probe", PROBES, src))
        cal = self.calibration
        if cal is not None:
            if not isinstance(cal, Calibration):
                raise BackboneError(f"{pre}spectrometer.calibration must be a Calibration, got {cal!r}")
            if cal.field_mhz not in fields:
                raise BackboneError(
                    f"{pre}spectrometer.calibration.field_mhz = {cal.field_mhz:g} is not one of "
                    f"spectrometer.fields_mhz ({', '.join(f'{f:g}' for f in fields)} MHz); add it there or "
                    f"give the field the reference was measured at"
                )

    def as_dict(self) -> dict:
        """JSON-friendly summary (MHz)."""
        return {
            "fields_mhz": list(self.fields_mhz),
            "probe": self.probe,
            "calibration": None if self.calibration is None else self.calibration.as_dict(),
        }


@dataclass(frozen=True)
class Candidates:
    """What the planner may choose from.

    labeling : tuple of LabelingChoice (scheme ids are accepted) — non-empty, no repeats
    experiments : tuple of str — names stored upper case, non-empty, no repeats; checked later against the
        experiment registry
    trosy : "auto", True or False — consider TROSY variants where the planner finds them better, always, never
    """

    labeling: tuple[LabelingChoice, ...]
    experiments: tuple[str, ...]
    trosy: str | bool = _TROSY_AUTO
    source: str = field(default="", compare=False, repr=False)

    def __post_init__(self):
        pre, src = _prefix(self.source), self.source
        raw = self.labeling
        if isinstance(raw, (str, bytes)) or not isinstance(raw, Sequence) or not raw:
            raise BackboneError(
                f"{pre}candidates.labeling = {raw!r} is not allowed; give a non-empty list of labeling scheme "
                f"ids, e.g. [\"13c15n\", \"2h13c15n\"]"
            )
        choices = tuple(
            _as_labeling_choice(v, f"candidates.labeling[{i}]", src) for i, v in enumerate(raw, start=1)
        )
        for i, c in enumerate(choices, start=1):
            if c in choices[: i - 1]:
                raise BackboneError(f"{pre}candidates.labeling[{i}] repeats {str(c)!r}; list each choice once")
        object.__setattr__(self, "labeling", choices)

        raw = self.experiments
        if isinstance(raw, (str, bytes)) or not isinstance(raw, Sequence) or not raw:
            raise BackboneError(
                f"{pre}candidates.experiments = {raw!r} is not allowed; give a non-empty list of experiment "
                f"names, e.g. [\"HNCA\", \"HN(CO)CA\"]"
            )
        names = tuple(
            _line(v, f"candidates.experiments[{i}]", src, "an experiment name such as 'HNCA'").upper()
            for i, v in enumerate(raw, start=1)
        )
        for i, n in enumerate(names, start=1):
            if n in names[: i - 1]:
                raise BackboneError(
                    f"{pre}candidates.experiments[{i}] repeats {n!r} (names are compared ignoring case); list "
                    f"each experiment once"
                )
        object.__setattr__(self, "experiments", names)

        trosy = self.trosy
        if isinstance(trosy, str) and trosy.strip().lower() == _TROSY_AUTO:
            trosy = _TROSY_AUTO
        elif not isinstance(trosy, bool):
            raise BackboneError(
                f"{pre}candidates.trosy = {trosy!r} is not allowed; allowed values: \"auto\", true, false"
            )
        object.__setattr__(self, "trosy", trosy)

    def as_dict(self) -> dict:
        """JSON-friendly summary."""
        return {
            "labeling": [c.as_dict() for c in self.labeling],
            "experiments": list(self.experiments),
            "trosy": self.trosy,
        }


@dataclass(frozen=True)
class Goals:
    """What the data must achieve.

    target_signal_to_noise : float [1] — wanted peak height over RMS noise for the weakest expected peak, > 0
    time_budget_h : float [h] — total spectrometer time for the chosen set of experiments, > 0
    resolution_hz : mapping nucleus -> float [Hz] — wanted resolution 1/t_max in that indirect dimension
        (nuclei: N, C, CA, CB, HA; each 1-1000 Hz); a nucleus left out has no requirement
    recycle_delay_s : float or None [s] — fixed recycle delay, 0 < d <= 10; None: the planner chooses
    high_power_duty_limit : float or None [fraction of one] — largest allowed fraction of each scan spent
        under high-power pulses and decoupling, 0 < x <= 1; None: no limit
    """

    target_signal_to_noise: float
    time_budget_h: float
    resolution_hz: Mapping[str, float] = field(default_factory=dict)
    recycle_delay_s: float | None = None
    high_power_duty_limit: float | None = None
    source: str = field(default="", compare=False, repr=False)

    def __post_init__(self):
        pre, src = _prefix(self.source), self.source
        object.__setattr__(
            self,
            "target_signal_to_noise",
            _number(self.target_signal_to_noise, "goals.target_signal_to_noise", _POSITIVE, src),
        )
        object.__setattr__(self, "time_budget_h", _number(self.time_budget_h, "goals.time_budget_h", _POSITIVE, src))
        if not isinstance(self.resolution_hz, Mapping):
            raise BackboneError(
                f"{pre}goals.resolution_hz = {self.resolution_hz!r} is not allowed; give a table of nucleus = Hz, "
                f"nuclei {', '.join(RESOLUTION_NUCLEI)}"
            )
        resolution = {}
        for nucleus, value in self.resolution_hz.items():
            if nucleus not in RESOLUTION_NUCLEI:
                raise _unknown_key(str(nucleus), "goals.resolution_hz", RESOLUTION_NUCLEI, self.source)
            resolution[nucleus] = _number(value, f"goals.resolution_hz.{nucleus}", _RESOLUTION_HZ, src)
        ordered = {n: resolution[n] for n in RESOLUTION_NUCLEI if n in resolution}
        object.__setattr__(self, "resolution_hz", MappingProxyType(ordered))
        object.__setattr__(
            self, "recycle_delay_s", _optional_number(self.recycle_delay_s, "goals.recycle_delay_s", _RECYCLE_S, src)
        )
        object.__setattr__(
            self,
            "high_power_duty_limit",
            _optional_number(self.high_power_duty_limit, "goals.high_power_duty_limit", _DUTY, src),
        )

    @property
    def t_max_s(self) -> Mapping[str, float]:
        """Longest evolution time [s] per indirect nucleus implied by ``resolution_hz`` (t_max = 1/resolution)."""
        return MappingProxyType({n: 1.0 / hz for n, hz in self.resolution_hz.items()})

    def as_dict(self) -> dict:
        """JSON-friendly summary in user units (h, Hz, s)."""
        return {
            "target_signal_to_noise": self.target_signal_to_noise,
            "time_budget_h": self.time_budget_h,
            "resolution_hz": dict(self.resolution_hz),
            "recycle_delay_s": self.recycle_delay_s,
            "high_power_duty_limit": self.high_power_duty_limit,
        }


@dataclass(frozen=True)
class Scenario:
    """A complete planning question. ``source`` is the file it was read from ("" when built in Python).

    A calibration that leaves out its concentration or temperature is completed here with the sample's.
    """

    protein: Protein
    sample: Sample
    spectrometer: Spectrometer
    candidates: Candidates
    goals: Goals
    description: str = ""
    source: str = field(default="", compare=False, repr=False)

    def __post_init__(self):
        pre = _prefix(self.source)
        for name, cls in (
            ("protein", Protein),
            ("sample", Sample),
            ("spectrometer", Spectrometer),
            ("candidates", Candidates),
            ("goals", Goals),
        ):
            if not isinstance(getattr(self, name), cls):
                raise BackboneError(f"{pre}{name} must be a {cls.__name__}, got {getattr(self, name)!r}")
        if not isinstance(self.description, str):
            raise BackboneError(f"{pre}description = {self.description!r} is not allowed; give text")
        object.__setattr__(self, "description", self.description.strip())
        cal = self.spectrometer.calibration
        if cal is not None and (cal.concentration_mm is None or cal.temperature_k is None):
            cal = dataclasses.replace(
                cal,
                concentration_mm=self.sample.concentration_mm if cal.concentration_mm is None else cal.concentration_mm,
                temperature_k=self.sample.temperature_k if cal.temperature_k is None else cal.temperature_k,
            )
            object.__setattr__(self, "spectrometer", dataclasses.replace(self.spectrometer, calibration=cal))

    def as_dict(self) -> dict:
        """The whole scenario as plain data for JSON, in the units the file uses."""
        return {
            "source": self.source,
            "description": self.description,
            "protein": self.protein.as_dict(),
            "sample": self.sample.as_dict(),
            "spectrometer": self.spectrometer.as_dict(),
            "candidates": self.candidates.as_dict(),
            "goals": self.goals.as_dict(),
        }


# ---------------------------------------------------------------------------------------------------------
# Reading a file
# ---------------------------------------------------------------------------------------------------------


def _table_label(name: str) -> str:
    return "at the top level" if name == "" else f"in [{name}]"


def _homes_of(key: str, table: str) -> list[str]:
    """The other tables in which ``key`` is valid, for a hint when a key sits in the wrong table."""
    return [name for name, keys in _KEYS.items() if name not in ("", table) and key in keys]


def _unknown_key(key: str, table: str, allowed: Sequence[str], where: str, label: str | None = None) -> BackboneError:
    """The error for ``key`` not in ``allowed``: names file, table and key, and suggests the closest valid key."""
    label = _table_label(table) if label is None else f"in {label}"
    homes = _homes_of(key, table)
    close = closest(key, allowed)
    if homes:
        hint = f" (it belongs in {' or '.join(f'[{h}]' for h in homes)})"
    elif close is not None:
        hint = f" (did you mean {close!r}?)"
    else:
        hint = ""
    return BackboneError(f"{_prefix(where)}unknown key {key!r} {label}{hint}; allowed keys: {', '.join(allowed)}")


def _table(data: Mapping, name: str, where: str, *, required: bool = True) -> dict | None:
    """The sub-table ``name`` (dotted) of ``data``, checked for unknown and missing keys."""
    key = name.rsplit(".", 1)[-1]
    if key not in data:
        if required:
            raise BackboneError(
                f"{where}: missing table [{name}]; a scenario needs "
                f"{', '.join(f'[{t}]' for t in _TOP_TABLES)}"
            )
        return None
    table = data[key]
    if not isinstance(table, Mapping):
        raise BackboneError(f"{where}: {name} = {table!r} is not allowed; it must be a table [{name}]")
    allowed = _KEYS[name]
    for k in table:
        if k not in allowed:
            raise _unknown_key(k, name, allowed, where)
    for k in _REQUIRED.get(name, ()):
        if k not in table:
            raise BackboneError(
                f"{where}: missing key {k!r} in [{name}]; required keys of [{name}]: {', '.join(_REQUIRED[name])}"
            )
    return dict(table)


def _pick(table: Mapping, keys: Sequence[str]) -> dict:
    """The entries of ``table`` among ``keys`` (absent keys keep the record's default)."""
    return {k: table[k] for k in keys if k in table}


def _temperature_k(table: Mapping, name: str, where: str, *, required: bool) -> float | None:
    """Kelvin from ``temperature_c`` or ``temperature_k`` of ``table`` (at most one; ``required``: exactly one)."""
    has_c, has_k = "temperature_c" in table, "temperature_k" in table
    if has_c and has_k:
        raise BackboneError(
            f"{where}: [{name}] gives both temperature_c and temperature_k; give only one"
        )
    if has_c:
        return celsius_to_kelvin(_number(table["temperature_c"], f"{name}.temperature_c", TEMPERATURE_C, where))
    if has_k:
        return _number(table["temperature_k"], f"{name}.temperature_k", _TEMPERATURE_K, where)
    if required:
        raise BackboneError(f"{where}: missing key 'temperature_c' (or 'temperature_k') in [{name}]")
    return None


def _labeling_choice(value, key: str, where: str) -> LabelingChoice:
    """A labeling entry of the file: a scheme id, or an inline table {scheme, deuteration}."""
    if isinstance(value, Mapping):
        for k in value:
            if k not in _LABELING_ENTRY_KEYS:
                raise _unknown_key(k, key, _LABELING_ENTRY_KEYS, where, label=key)
        if "scheme" not in value:
            raise BackboneError(
                f"{where}: missing key 'scheme' in {key}; give {{ scheme = \"...\", deuteration = ... }}"
            )
        return LabelingChoice(value["scheme"], value.get("deuteration"), source=where, key=key)
    return _as_labeling_choice(value, key, where)


def _protein(data: Mapping, where: str, folder: Path) -> Protein:
    t = _table(data, "protein", where)
    kwargs = _pick(t, _KEYS["protein"])
    path = kwargs.get("sequence_file")
    if isinstance(path, str) and path.strip():
        p = Path(path.strip()).expanduser()
        kwargs["sequence_file"] = p if p.is_absolute() else folder / p
    return Protein(**kwargs, source=where)


def _sample(data: Mapping, where: str) -> Sample:
    t = _table(data, "sample", where)
    kwargs = _pick(t, ("concentration_mm", "solvent", "volume_ul"))
    return Sample(temperature_k=_temperature_k(t, "sample", where, required=True), **kwargs, source=where)


def _calibration(spec: Mapping, where: str) -> Calibration | None:
    name = "spectrometer.calibration"
    t = _table(spec, name, where, required=False)
    if t is None:
        return None
    kwargs = _pick(t, ("experiment", "trosy", "signal_to_noise", "time_min", "field_mhz", "concentration_mm"))
    return Calibration(
        labeling=_labeling_choice(t["labeling"], f"{name}.labeling", where),
        temperature_k=_temperature_k(t, name, where, required=False),
        **kwargs,
        source=where,
    )


def _spectrometer(data: Mapping, where: str) -> Spectrometer:
    t = _table(data, "spectrometer", where)
    return Spectrometer(
        fields_mhz=t["fields_mhz"], probe=t["probe"], calibration=_calibration(t, where), source=where
    )


def _candidates(data: Mapping, where: str) -> Candidates:
    t = _table(data, "candidates", where)
    raw = t["labeling"]
    if isinstance(raw, list):
        raw = [_labeling_choice(v, f"candidates.labeling[{i}]", where) for i, v in enumerate(raw, start=1)]
    kwargs = _pick(t, ("trosy",))
    return Candidates(labeling=raw, experiments=t["experiments"], **kwargs, source=where)


def _goals(data: Mapping, where: str) -> Goals:
    t = _table(data, "goals", where)
    resolution = _table(t, "goals.resolution_hz", where, required=False)
    kwargs = _pick(t, ("target_signal_to_noise", "time_budget_h", "recycle_delay_s", "high_power_duty_limit"))
    return Goals(**kwargs, resolution_hz=resolution or {}, source=where)


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate the scenario file at ``path`` (TOML; keys documented in ``scenarios/README.md``).

    Raises
    ------
    BackboneError
        One line naming the file and what is wrong: an unreadable file, a TOML syntax error (with line and
        column), an unknown key (with the table and the closest valid key), a missing table or key, a value of
        the wrong type or outside its allowed range, a sequence with a letter that is not a standard amino acid
        (with its position), or an unreadable sequence file.
    """
    path = Path(path)
    where = str(path)
    data = read_toml(path, "scenario file")

    for key in data:
        if key not in _KEYS[""]:
            raise _unknown_key(key, "", _KEYS[""], where)
    folder = path.absolute().parent
    return Scenario(
        protein=_protein(data, where, folder),
        sample=_sample(data, where),
        spectrometer=_spectrometer(data, where),
        candidates=_candidates(data, where),
        goals=_goals(data, where),
        description=data.get("description", ""),
        source=where,
    )
