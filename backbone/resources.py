"""Where the bundled declarative definitions live once installed.

``models/`` at the top of the repository is installed as the subpackage ``backbone.models``; this module is
the one place that knows it, for wheels and editable installs alike.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

__all__ = ["models_dir"]


def models_dir(kind: str) -> Path:
    """Folder of the bundled definitions of ``kind`` (``"labeling"`` or ``"experiments"``)."""
    root = resources.files("backbone.models")
    return Path(str(root.joinpath(kind)))
