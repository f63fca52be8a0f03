"""backbone: relaxation-aware planning of protein backbone triple-resonance NMR experiments.

The physics layers (``constants``, ``graph``, ``labeling``, ``relaxation``) are pure, vectorized numpy
functions in SI units; ``cli`` is a thin front end over them.
"""

from backbone.errors import BackboneError

__all__ = ["BackboneError", "__version__"]
__version__ = "0.1.0"
