"""Where the bundled declarative definitions live.

``models/`` at the top of the repository is installed as the subpackage ``backbone.models`` (see
pyproject.toml); this module is the one place that knows it. When the package is imported straight from a
source checkout without that mapping (``python -m pytest`` puts the checkout first on ``sys.path``), the
checkout's own ``models/`` folder is used.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

__all__ = ["models_dir"]

_CHECKOUT_MODELS = Path(__file__).resolve().parent.parent / "models"


def models_dir(kind: str) -> Path:
    """Folder of the bundled definitions of ``kind`` (``"labeling"`` or ``"experiments"``)."""
    try:
        root = Path(str(resources.files("backbone.models")))
    except ModuleNotFoundError:
        root = _CHECKOUT_MODELS
    return root / kind
