"""The tool's version, read from the installed distribution's metadata.

At the bottom of the package so that every layer can name the version in its
outputs without importing the package's public face.
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

__all__ = ["DISTRIBUTION", "__version__"]

#: The distribution's name on the package index (the import name is ``stability``).
DISTRIBUTION = "oscillator-stability"

try:
    __version__ = version(DISTRIBUTION)
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+unknown"
