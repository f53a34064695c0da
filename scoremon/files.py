"""Writing a text file whole or not at all.

The text goes to a temporary file beside the target (same folder, so the same file system)
and is moved over the target with ``os.replace``, which is atomic: a reader sees the old file
or the new one, never half of one, and a failure leaves no partial file behind.
"""
from __future__ import annotations

import os
import uuid
from pathlib import Path


def write_whole(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` (UTF-8) whole or not at all; returns the path."""
    path = Path(path)
    temporary = path.with_name(f".{path.name}.{uuid.uuid4().hex}.partial")
    try:
        temporary.write_text(text, encoding="utf-8")
        os.replace(temporary, path)
    finally:
        if temporary.exists():
            temporary.unlink()
    return path
