"""Reading the package's declarative TOML files (labeling schemes, experiment models, scenarios).

One place turns an unreadable file, a non-UTF-8 file or a TOML syntax error into a one-line
:class:`BackboneError` naming the file (tomllib's message carries the line and column), and suggests the
closest valid key for a misspelled one.
"""

from __future__ import annotations

import difflib
import tomllib
from collections.abc import Iterable
from pathlib import Path

from backbone.errors import BackboneError

__all__ = ["read_toml", "closest"]


def read_toml(path: str | Path, what: str) -> dict:
    """Parsed contents of the TOML file at ``path``; ``what`` names the kind of file in messages."""
    where = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as err:
        raise BackboneError(f"{where}: cannot read {what} ({err.strerror or err})") from err
    except UnicodeDecodeError as err:
        raise BackboneError(f"{where}: {what} is not UTF-8 text") from err
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise BackboneError(f"{where}: not valid TOML: {err}") from err


def closest(word: str, allowed: Iterable[str], *, cutoff: float = 0.6) -> str | None:
    """The entry of ``allowed`` closest to ``word`` (case-insensitive), or None when nothing is close."""
    options = [str(a) for a in allowed]
    lowered = {a.lower(): a for a in options}
    match = difflib.get_close_matches(str(word).lower(), list(lowered), n=1, cutoff=cutoff)
    return lowered[match[0]] if match else None
