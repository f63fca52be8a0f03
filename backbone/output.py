"""Writing output files whole or not at all, never over an existing file unless asked.

Every file the package writes (tables, plots) goes through :func:`write_atomically`: the content is written to
a temporary file in the target's folder, which then replaces the target in one ``os.replace``; an existing file
is refused unless ``force``; nothing is left behind when anything fails.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable
from pathlib import Path

from backbone.errors import BackboneError

__all__ = ["FIGURE_FORMATS", "write_atomically"]

#: Figure file extensions the plots accept, with the matplotlib format name written for each.
FIGURE_FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}


def write_atomically(path, write: Callable[[str], None], *, force: bool = False, formats=None, what: str = "file") -> Path:
    """Write a file whole or not at all: ``write(tmp_path)`` fills a temporary file in the target's folder, which
    then replaces ``path`` (``os.replace``). Refuses an existing ``path`` unless ``force``; ``formats``
    (extension → description) limits the allowed extensions. Returns the path written.

    Raises :class:`BackboneError` naming the file for an existing file, a missing or unwritable folder, or an
    extension not in ``formats``; nothing is left behind on any error, including one raised by ``write``.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if formats is not None and suffix not in formats:
        allowed = ", ".join(f"{ext} ({desc})" for ext, desc in formats.items())
        raise BackboneError(f"{what} {str(path)!r}: extension {suffix or '(none)'!r} is not allowed; use {allowed}")
    if path.exists() and not force:
        raise BackboneError(f"{what} {str(path)!r} exists; not overwriting it (pass force=True / --force to replace it)")
    if path.is_dir():
        raise BackboneError(f"{what} {str(path)!r} is a folder, not a file")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise BackboneError(f"{what} {str(path)!r}: folder {str(folder)!r} does not exist")
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".part" + suffix)
    except OSError as err:
        raise BackboneError(f"{what} {str(path)!r}: cannot write in folder {str(folder)!r}: {err.strerror or err}") from err
    os.close(fd)
    try:
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes it private; give it the mode of an ordinary new file
        write(tmp)
        os.replace(tmp, path)
    except BaseException as err:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(err, OSError):
            raise BackboneError(f"{what} {str(path)!r}: could not be written: {err.strerror or err}") from err
        raise
    return path
