"""Noise mechanisms: what a noise source is, and the physics of each density."""

from netnoise.noise.mechanisms import *  # noqa: F401,F403
from netnoise.noise.mechanisms import __all__  # noqa: F401
