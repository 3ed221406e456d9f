"""Bandgate: identity testing of incoming raw-material lots by mid-IR spectroscopy."""

from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("bandgate")
except PackageNotFoundError:  # running from a source tree without installation
    __version__ = "0.0.0+source"

__all__ = ["__version__"]
