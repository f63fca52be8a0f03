"""Declarative definitions shipped with the package (see models/README.md)."""
