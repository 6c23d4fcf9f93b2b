"""Stage 1 -- factors: build, read and validate factor graphs; their matrices and certified spectra."""

from powerspec.factors.core import *  # noqa: F401,F403
from powerspec.factors.core import __all__  # noqa: F401
