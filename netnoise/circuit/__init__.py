"""The circuit and its element kinds: what the engine sees."""

from netnoise.circuit.flat import *  # noqa: F401,F403
from netnoise.circuit.flat import __all__  # noqa: F401
