"""partpick: parts and order for a discrete class-AB audio power amplifier.

The package is layered; imports point down this list only:
``cli`` -> ``report`` / ``optimize`` -> ``evaluate`` -> ``model``;
``catalog`` and ``spec`` read the user's files into typed data.
"""

__version__ = "0.1.0"
