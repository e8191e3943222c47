"""The installed version, in a module of its own so that report and store need not
import the package's __init__ (and everything it imports) to stamp it."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("capbench")
except PackageNotFoundError:  # running from a source tree without installation
    __version__ = "0.0.0+unknown"
