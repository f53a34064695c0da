"""scoremon's own version, as its installed distribution records it; stamped on compiled SQL and
on every JSON and Markdown report."""
from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

try:
    VERSION = version("scoremon")
except PackageNotFoundError:  # run from a source tree that was never installed
    VERSION = "unknown"
