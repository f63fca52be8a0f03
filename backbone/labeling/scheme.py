"""Isotope labeling schemes: which isotope each site of the protein carries, read from declarative TOML.

A *site* is a chemical position class (amide proton, backbone nitrogen, Cα, carbonyl C′, Cβ, any Cγ, Hα,
Hβ, the Ile δ1 / Leu δ / Val γ methyl protons, all other side-chain protons). A scheme gives every site the
fraction of its spin-½ isotope (1H, 13C or 15N); the rest of the site is the other isotope of the element
(2H, 12C or 14N). The bundled schemes live in ``models/labeling/*.toml``; ``models/labeling/README.md``
documents the file format. Users may point :func:`load_scheme` at their own file, which is validated with the
same messages.

What a scheme describes is the *protein as prepared*. The amide protons of a perdeuterated protein are taken
as fully back-exchanged to 1H (the protein was refolded or kept in H2O buffer). The D2O fraction of the NMR
buffer (typically 5–10 % for the lock, or 100 % for a D2O sample) sets the amide 1H occupancy of the sample
and is a property of the sample, not of the labeling scheme: downstream code scales the amide fraction by it.

Public API
----------
``SiteLabel``, ``LabelingScheme`` (frozen, validated on construction), ``load_scheme``,
``registered_schemes``, ``apply_labeling``, ``unlabeled_sites``, and the vocabulary ``SITES``,
``SITE_ELEMENT``, ``BACKBONE_SITES``.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType

from backbone.constants import NATURAL_ABUNDANCE
from backbone.errors import BackboneError
from backbone.tomlfile import read_toml
from backbone.resources import models_dir

__all__ = [
    "SITES",
    "SITE_ELEMENT",
    "BACKBONE_SITES",
    "SiteLabel",
    "LabelingScheme",
    "load_scheme",
    "registered_schemes",
    "apply_labeling",
    "unlabeled_sites",
]

#: Every site a scheme must label (the shared vocabulary of graph, labeling and relaxation).
SITES = ("H", "N", "CA", "C", "CB", "CG", "HA", "HB", "HMETHYL_ILV", "HSIDE")

#: Element of each site.
SITE_ELEMENT = MappingProxyType(
    {
        "H": "H",
        "N": "N",
        "CA": "C",
        "C": "C",
        "CB": "C",
        "CG": "C",
        "HA": "H",
        "HB": "H",
        "HMETHYL_ILV": "H",
        "HSIDE": "H",
    }
)

#: Backbone nuclei whose labeling the experiments depend on; :func:`unlabeled_sites` reports these.
BACKBONE_SITES = ("N", "CA", "C", "CB", "H", "HA")

_ELEMENT_NAME = {"H": "hydrogen", "C": "carbon", "N": "nitrogen"}
#: Spin-½ isotope of each element (the one whose fraction a scheme stores) and the other isotope.
_SPIN_HALF = {"H": "1H", "C": "13C", "N": "15N"}
_OTHER = {"H": "2H", "C": "12C", "N": "14N"}
_ELEMENT_OF_ISOTOPE = {iso: el for el, iso in _SPIN_HALF.items()} | {iso: el for el, iso in _OTHER.items()}

_TOP_KEYS = ("id", "name", "description", "deuteration", "sites")
_REQUIRED_TOP_KEYS = ("id", "name", "description", "sites")
_DEUTERATION_KEYS = ("level", "range", "adjustable")
_SITE_KEYS = ("isotope", "fraction", "deuterated")
_ID_PATTERN = re.compile(r"[A-Za-z0-9][A-Za-z0-9._+-]*\Z")
#: Tolerance when checking that a deuterated site holds 1 − level.
_LEVEL_TOL = 1e-12


def _is_number(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _natural_fraction(isotope: str) -> float:
    """Natural abundance [fraction of one] of ``isotope`` (Harris et al. 2001 through backbone.constants)."""
    element = _ELEMENT_OF_ISOTOPE[isotope]
    spin_half = NATURAL_ABUNDANCE[_SPIN_HALF[element]].value
    return spin_half if isotope == _SPIN_HALF[element] else 1.0 - spin_half


def _allowed_isotopes(element: str) -> str:
    return f"{_SPIN_HALF[element]} or {_OTHER[element]}"


@dataclass(frozen=True)
class SiteLabel:
    """Isotope content of one site.

    ``isotope`` is always the spin-½ isotope of the element (``"1H"``, ``"13C"`` or ``"15N"``) and ``fraction``
    its share [fraction of one]; the remainder is 2H, 12C or 14N. ``follows_deuteration`` marks a hydrogen site
    whose 1H fraction is 1 − (deuteration level) of its scheme and changes with it.
    """

    isotope: str
    fraction: float
    follows_deuteration: bool = False

    def __post_init__(self):
        if not isinstance(self.isotope, str) or self.isotope not in _SPIN_HALF.values():
            raise BackboneError(
                f"isotope {self.isotope!r}: a site label stores the spin-1/2 isotope, one of "
                f"{', '.join(_SPIN_HALF.values())}"
            )
        if not _is_number(self.fraction) or not math.isfinite(self.fraction):
            raise BackboneError(f"fraction {self.fraction!r} must be a number in [0, 1]")
        if not 0.0 <= self.fraction <= 1.0:
            raise BackboneError(f"fraction {self.fraction!r} is outside the allowed range [0, 1]")
        object.__setattr__(self, "fraction", float(self.fraction))
        if not isinstance(self.follows_deuteration, bool):
            raise BackboneError(f"follows_deuteration {self.follows_deuteration!r} must be true or false")
        if self.follows_deuteration and self.isotope != "1H":
            raise BackboneError(f"only hydrogen sites can follow the deuteration level, not {self.isotope}")

    @property
    def element(self) -> str:
        """Element symbol ``"H"``, ``"C"`` or ``"N"``."""
        return _ELEMENT_OF_ISOTOPE[self.isotope]

    @property
    def majority_isotope(self) -> str:
        """The isotope holding more than half of the site (the spin-½ one at exactly one half is not)."""
        return self.isotope if self.fraction > 0.5 else _OTHER[self.element]


@dataclass(frozen=True)
class LabelingScheme:
    """A labeling scheme: the isotope of every site, validated on construction.

    ``source`` is the file it came from (used in every message). ``deuteration`` is the level [fraction of one]
    of 2H at the non-exchangeable hydrogen sites marked ``follows_deuteration``, or None for a protonated
    scheme; ``deuteration_range`` the closed range it may take and ``deuteration_adjustable`` whether a user
    may change it (:meth:`with_deuteration`).
    """

    id: str
    name: str
    description: str
    source: str
    sites: Mapping[str, SiteLabel] = field(hash=False)
    deuteration: float | None = None
    deuteration_range: tuple[float, float] | None = None
    deuteration_adjustable: bool = False

    def __post_init__(self):
        where = self.source
        for key in ("id", "name", "description", "source"):
            if not isinstance(getattr(self, key), str):
                raise BackboneError(f"{where}: {key} must be a string, got {getattr(self, key)!r}")
        if not _ID_PATTERN.match(self.id):
            raise BackboneError(
                f"{where}: id {self.id!r} must start with a letter or digit and contain only letters, "
                f"digits and . _ + -"
            )
        if not self.name.strip():
            raise BackboneError(f"{where}: name must not be empty")
        if not isinstance(self.sites, Mapping):
            raise BackboneError(f"{where}: sites must be a mapping of site -> SiteLabel")
        unknown = [s for s in self.sites if s not in SITE_ELEMENT]
        if unknown:
            raise BackboneError(
                f"{where}: unknown site {unknown[0]!r} in [sites]; known sites are {', '.join(SITES)}"
            )
        missing = [s for s in SITES if s not in self.sites]
        if missing:
            raise BackboneError(
                f"{where}: [sites] lacks {', '.join(missing)}; a scheme gives every site: {', '.join(SITES)}"
            )
        for site in SITES:
            label = self.sites[site]
            if not isinstance(label, SiteLabel):
                raise BackboneError(f"{where}: sites.{site} must be a SiteLabel, got {label!r}")
            element = SITE_ELEMENT[site]
            if label.element != element:
                raise BackboneError(
                    f"{where}: sites.{site}: isotope {label.isotope} does not fit a {_ELEMENT_NAME[element]} "
                    f"site; allowed are {_allowed_isotopes(element)}"
                )
        object.__setattr__(self, "sites", MappingProxyType({s: self.sites[s] for s in SITES}))
        self._check_deuteration()

    def _check_deuteration(self):
        where = self.source
        following = [s for s in SITES if self.sites[s].follows_deuteration]
        if self.deuteration is None:
            if following:
                raise BackboneError(
                    f"{where}: sites.{following[0]} is marked deuterated but the scheme has no "
                    f"[deuteration] level; add [deuteration] with level = ..."
                )
            if self.deuteration_range is not None or self.deuteration_adjustable:
                raise BackboneError(f"{where}: a deuteration range or adjustable flag needs a deuteration level")
            return
        level = self.deuteration
        if not _is_number(level) or not math.isfinite(level):
            raise BackboneError(f"{where}: deuteration.level must be a number in [0, 1], got {level!r}")
        object.__setattr__(self, "deuteration", float(level))
        rng = self.deuteration_range
        if rng is None:
            rng = (float(level), float(level))
        if (
            not isinstance(rng, (tuple, list))
            or len(rng) != 2
            or not all(_is_number(x) and math.isfinite(x) for x in rng)
            or not 0.0 <= rng[0] <= rng[1] <= 1.0
        ):
            raise BackboneError(
                f"{where}: deuteration.range must be two numbers [low, high] with 0 <= low <= high <= 1, "
                f"got {self.deuteration_range!r}"
            )
        rng = (float(rng[0]), float(rng[1]))
        object.__setattr__(self, "deuteration_range", rng)
        if not isinstance(self.deuteration_adjustable, bool):
            raise BackboneError(
                f"{where}: deuteration.adjustable must be true or false, got {self.deuteration_adjustable!r}"
            )
        if not rng[0] <= level <= rng[1]:
            raise BackboneError(
                f"{where}: deuteration.level = {level:g} is outside the allowed range [{rng[0]:g}, {rng[1]:g}]"
            )
        if not following:
            raise BackboneError(
                f"{where}: [deuteration] is given but no site follows it; mark the deuterated hydrogen sites "
                f"with deuterated = true"
            )
        for s in following:
            if abs(self.sites[s].fraction - (1.0 - level)) > _LEVEL_TOL:
                raise BackboneError(
                    f"{where}: sites.{s} follows the deuteration level {level:g}, so its 1H fraction must be "
                    f"{1.0 - level:g}, not {self.sites[s].fraction:g}"
                )

    # -- queries -------------------------------------------------------------------------------------------

    def _label(self, site: str) -> SiteLabel:
        try:
            return self.sites[site]
        except KeyError as err:
            raise BackboneError(
                f"labeling scheme {self.id!r}: unknown site {site!r}; known sites are {', '.join(SITES)}"
            ) from err

    def fraction(self, site: str) -> float:
        """Fraction [of one] of the spin-½ isotope (1H, 13C or 15N) at ``site``."""
        return self._label(site).fraction

    def isotope(self, site: str) -> str:
        """Majority isotope at ``site``: ``"1H"``, ``"2H"``, ``"13C"``, ``"12C"``, ``"15N"`` or ``"14N"``."""
        return self._label(site).majority_isotope

    def is_labeled(self, site: str) -> bool:
        """True if ``site`` is 13C/15N enriched (fraction > 0.5) or, for hydrogen, mostly 1H."""
        return self._label(site).fraction > 0.5

    @property
    def protonated(self) -> bool:
        """True if the scheme has no deuteration level."""
        return self.deuteration is None

    def with_deuteration(self, level: float) -> LabelingScheme:
        """A copy of this scheme with deuteration ``level`` [fraction of one] at its deuterated sites.

        Only for schemes whose file declares ``adjustable = true``; ``level`` must lie in the scheme's range.
        """
        if self.deuteration is None or not self.deuteration_adjustable:
            kind = "is protonated (it has no deuteration level)" if self.deuteration is None else (
                "has a fixed deuteration level"
            )
            adjustable = [k for k, s in registered_schemes().items() if s.deuteration_adjustable]
            raise BackboneError(
                f"labeling scheme {self.id!r} ({self.source}) {kind}; schemes whose deuteration can be set: "
                f"{', '.join(adjustable) or 'none'}"
            )
        low, high = self.deuteration_range
        if not _is_number(level) or not math.isfinite(level):
            raise BackboneError(
                f"deuteration of labeling scheme {self.id!r} must be a number in [{low:g}, {high:g}], "
                f"got {level!r}"
            )
        if not low <= level <= high:
            raise BackboneError(
                f"deuteration = {level:g} is outside the allowed range [{low:g}, {high:g}] of labeling "
                f"scheme {self.id!r}"
            )
        sites = {
            s: SiteLabel("1H", 1.0 - float(level), True) if lab.follows_deuteration else lab
            for s, lab in self.sites.items()
        }
        return dataclasses.replace(self, sites=sites, deuteration=float(level))

    def as_dict(self) -> dict:
        """Plain-data summary for JSON output.

        Per site: ``isotope`` (majority isotope), ``fraction`` (share of the spin-½ isotope) and ``fraction_of``
        (that spin-½ isotope), the same convention as :func:`apply_labeling`.
        """
        return {
            "id": self.id,
            "name": self.name,
            "source": self.source,
            "deuteration": self.deuteration,
            "sites": {
                s: {"isotope": self.isotope(s), "fraction": lab.fraction, "fraction_of": lab.isotope}
                for s, lab in self.sites.items()
            },
        }


# ---------------------------------------------------------------------------------------------------------
# Reading TOML
# ---------------------------------------------------------------------------------------------------------


def _check_keys(table: Mapping, allowed: tuple[str, ...], where: str, context: str):
    for key in table:
        if key not in allowed:
            raise BackboneError(f"{where}: unknown key {context}{key!r}; allowed keys are {', '.join(allowed)}")


def _parse_site(site: str, raw, where: str, level: float | None) -> SiteLabel:
    key = f"sites.{site}"
    element = SITE_ELEMENT[site]
    if not isinstance(raw, Mapping):
        raise BackboneError(
            f"{where}: {key} must be a table such as {{isotope = \"{_SPIN_HALF[element]}\", fraction = 0.99}}, "
            f"got {raw!r}"
        )
    _check_keys(raw, _SITE_KEYS, where, f"in {key}: ")
    if "isotope" not in raw:
        raise BackboneError(f"{where}: {key} lacks isotope; allowed are {_allowed_isotopes(element)}")
    isotope = raw["isotope"]
    if not isinstance(isotope, str) or _ELEMENT_OF_ISOTOPE.get(isotope) != element:
        raise BackboneError(
            f"{where}: {key}.isotope = {isotope!r} does not fit a {_ELEMENT_NAME[element]} site; "
            f"allowed are {_allowed_isotopes(element)}"
        )
    deuterated = raw.get("deuterated", False)
    if not isinstance(deuterated, bool):
        raise BackboneError(f"{where}: {key}.deuterated must be true or false, got {deuterated!r}")
    if deuterated:
        if element != "H":
            raise BackboneError(
                f"{where}: {key}.deuterated = true is allowed only for hydrogen sites "
                f"({', '.join(s for s in SITES if SITE_ELEMENT[s] == 'H')})"
            )
        if "fraction" in raw:
            raise BackboneError(
                f"{where}: {key} gives both fraction and deuterated = true; a deuterated site takes its "
                f"1H fraction from the [deuteration] level, so remove fraction"
            )
        if level is None:
            raise BackboneError(
                f"{where}: {key}.deuterated = true needs a [deuteration] table with level = ... in the file"
            )
        return SiteLabel("1H", 1.0 - level, True)
    if "fraction" not in raw:
        raise BackboneError(f"{where}: {key} lacks fraction; give a number in [0, 1] or \"natural\"")
    frac = raw["fraction"]
    if frac == "natural":
        frac = _natural_fraction(isotope)
    elif not _is_number(frac) or not math.isfinite(frac) or not 0.0 <= frac <= 1.0:
        raise BackboneError(
            f"{where}: {key}.fraction = {frac!r} is not allowed; give a number in [0, 1] or \"natural\""
        )
    spin_half = _SPIN_HALF[element]
    return SiteLabel(spin_half, float(frac) if isotope == spin_half else 1.0 - float(frac))


def _scheme_from_data(data: Mapping, where: str) -> LabelingScheme:
    _check_keys(data, _TOP_KEYS, where, "")
    for key in _REQUIRED_TOP_KEYS:
        if key not in data:
            raise BackboneError(f"{where}: missing key {key!r}; a labeling scheme needs {', '.join(_REQUIRED_TOP_KEYS)}")
    for key in ("id", "name", "description"):
        if not isinstance(data[key], str):
            raise BackboneError(f"{where}: {key} must be a string, got {data[key]!r}")

    level = rng = None
    adjustable = False
    if "deuteration" in data:
        deut = data["deuteration"]
        if not isinstance(deut, Mapping):
            raise BackboneError(f"{where}: deuteration must be a table with keys {', '.join(_DEUTERATION_KEYS)}")
        _check_keys(deut, _DEUTERATION_KEYS, where, "in deuteration: ")
        if "level" not in deut:
            raise BackboneError(f"{where}: [deuteration] lacks level (a number in [0, 1])")
        level = deut["level"]
        if not _is_number(level) or not math.isfinite(level) or not 0.0 <= level <= 1.0:
            raise BackboneError(f"{where}: deuteration.level = {level!r} must be a number in [0, 1]")
        level = float(level)
        adjustable = deut.get("adjustable", False)
        if not isinstance(adjustable, bool):
            raise BackboneError(f"{where}: deuteration.adjustable must be true or false, got {adjustable!r}")
        if "range" in deut:
            rng = deut["range"]
            if not isinstance(rng, list) or len(rng) != 2 or not all(_is_number(x) for x in rng):
                raise BackboneError(
                    f"{where}: deuteration.range must be two numbers [low, high] in [0, 1], got {rng!r}"
                )
            rng = (float(rng[0]), float(rng[1]))
        elif adjustable:
            raise BackboneError(
                f"{where}: deuteration.adjustable = true needs range = [low, high], the levels a user may choose"
            )

    raw_sites = data["sites"]
    if not isinstance(raw_sites, Mapping):
        raise BackboneError(f"{where}: sites must be a table [sites] with one entry per site: {', '.join(SITES)}")
    for site in raw_sites:
        if site not in SITE_ELEMENT:
            raise BackboneError(
                f"{where}: unknown key 'sites.{site}'; known sites are {', '.join(SITES)}"
            )
    sites = {site: _parse_site(site, raw, where, level) for site, raw in raw_sites.items()}
    return LabelingScheme(
        id=data["id"],
        name=data["name"],
        description=data["description"].strip(),
        source=where,
        sites=sites,
        deuteration=level,
        deuteration_range=rng,
        deuteration_adjustable=adjustable,
    )


def _read_file(path: Path) -> LabelingScheme:
    return _scheme_from_data(read_toml(path, "labeling scheme file"), str(path))


def _bundled_paths() -> dict[str, Path]:
    return {p.stem: p for p in sorted(models_dir("labeling").glob("*.toml"))}


@functools.lru_cache(maxsize=None)
def _bundled(scheme_id: str) -> LabelingScheme:
    path = _bundled_paths()[scheme_id]
    scheme = _read_file(path)
    if scheme.id != scheme_id:
        raise BackboneError(f"{path}: id {scheme.id!r} must equal the file name {scheme_id!r}")
    return scheme


def registered_schemes() -> dict[str, LabelingScheme]:
    """The bundled schemes of ``models/labeling/``, by id (file name without ``.toml``), sorted by id."""
    return {sid: _bundled(sid) for sid in _bundled_paths()}


def _looks_like_path(text: str) -> bool:
    return "/" in text or "\\" in text or text.lower().endswith(".toml")


def load_scheme(id_or_path: str | Path, *, deuteration: float | None = None) -> LabelingScheme:
    """A labeling scheme by bundled id (``"15n"``, ``"13c15n"``, ...) or from the path of a user's TOML file.

    ``deuteration`` [fraction of one], if given, replaces the scheme's default level (see
    :meth:`LabelingScheme.with_deuteration`). Unknown ids raise :class:`BackboneError` listing the known ones.
    """
    if isinstance(id_or_path, Path) or (isinstance(id_or_path, str) and _looks_like_path(id_or_path)):
        scheme = _read_file(Path(id_or_path))
    elif isinstance(id_or_path, str):
        known = _bundled_paths()
        if id_or_path not in known:
            raise BackboneError(
                f"unknown labeling scheme {id_or_path!r}; known are {', '.join(known)}, "
                f"or give the path of a TOML file"
            )
        scheme = _bundled(id_or_path)
    else:
        raise BackboneError(f"labeling scheme must be an id or a file path, got {id_or_path!r}")
    if deuteration is not None:
        scheme = scheme.with_deuteration(deuteration)
    return scheme


# ---------------------------------------------------------------------------------------------------------
# Using a scheme
# ---------------------------------------------------------------------------------------------------------


def apply_labeling(G, scheme):
    """Copy of the networkx graph ``G`` whose nodes carry ``isotope`` and ``fraction`` from ``scheme``.

    Every node needs a ``site`` attribute (one of :data:`SITES`). ``isotope`` is the majority isotope of the
    site (:meth:`LabelingScheme.isotope`), ``fraction`` the fraction of its spin-½ isotope 1H/13C/15N
    (:meth:`LabelingScheme.fraction`); so a 98 % deuterated Hα gets ``isotope="2H"``, ``fraction=0.02``.
    ``scheme`` may also be an id or path accepted by :func:`load_scheme`. ``G`` itself is left unchanged.
    """
    if isinstance(scheme, (str, Path)):
        scheme = load_scheme(scheme)
    H = G.copy()
    for node, attrs in H.nodes(data=True):
        site = attrs.get("site")
        if site is None:
            raise BackboneError(f"graph node {node!r} has no 'site' attribute; nodes need one of {', '.join(SITES)}")
        if site not in SITE_ELEMENT:
            raise BackboneError(f"graph node {node!r}: unknown site {site!r}; known sites are {', '.join(SITES)}")
        attrs["isotope"] = scheme.isotope(site)
        attrs["fraction"] = scheme.fraction(site)
    return H


def unlabeled_sites(scheme) -> tuple[str, ...]:
    """Backbone sites (of :data:`BACKBONE_SITES`, in that order) that ``scheme`` leaves unlabeled.

    Unlabeled means not 13C/15N enriched for heavy atoms and mostly 2H for protons (see
    :meth:`LabelingScheme.is_labeled`); e.g. ``("CA", "C", "CB")`` for uniform 15N labeling.
    """
    return tuple(s for s in BACKBONE_SITES if not scheme.is_labeled(s))
