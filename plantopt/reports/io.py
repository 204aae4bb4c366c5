"""Writing output files so that nothing is lost or half-written.

Every output goes to a temporary file in the target's folder and is moved
over the target with :func:`os.replace` (atomic on POSIX and Windows), so an
interrupted run leaves either the old file or the complete new one.
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path
from typing import Any


def atomic_write_bytes(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically (temporary file, fsync, rename)."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def atomic_write_text(path: str | Path, text: str) -> None:
    atomic_write_bytes(path, text.encode("utf-8"))


def write_json(path: str | Path, obj: Any) -> None:
    """Write a pydantic model, dict or list as indented JSON, atomically."""
    if hasattr(obj, "model_dump"):
        obj = obj.model_dump(mode="json")
    atomic_write_text(path, json.dumps(obj, indent=2, allow_nan=False, default=_default) + "\n")


def _default(o: Any) -> Any:
    try:
        import numpy as np

        if isinstance(o, np.generic):
            return o.item()
        if isinstance(o, np.ndarray):
            return o.tolist()
    except ImportError:  # pragma: no cover
        pass
    raise TypeError(f"not JSON serialisable: {type(o).__name__}")
