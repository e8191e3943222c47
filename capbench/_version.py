"""The installed capbench version, read without importing the package's ``__init__``."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("capbench")
except PackageNotFoundError:  # running from a source tree without installation
    __version__ = "0.0.0+unknown"
