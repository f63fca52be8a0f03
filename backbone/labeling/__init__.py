"""Isotope labeling: which isotope (1H/2H, 13C/12C, 15N/14N) each site of the protein carries.

Schemes are declarative TOML files in ``models/labeling/`` (format: ``models/labeling/README.md``), read into
frozen, self-validating :class:`LabelingScheme` objects. See :mod:`backbone.labeling.scheme`.
"""

from backbone.labeling.scheme import (
    BACKBONE_SITES,
    SITE_ELEMENT,
    SITES,
    LabelingScheme,
    SiteLabel,
    apply_labeling,
    load_scheme,
    registered_schemes,
    unlabeled_sites,
)

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
