"""Writing output files so that nothing is lost or half-written.

Every output goes to a temporary file in the target's folder and is moved
over the target with :func:`os.replace` (atomic on POSIX and Windows), so an
interrupted run leaves either the old file or the complete new one. Content is
produced in full before the temporary file is opened, so a failing serializer
never touches the disk. Output names come only from the paths the user gave;
nothing in an input file is ever used as a file name.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any


#: set by the command line's SIGTERM handler. The handler also raises
#: SystemExit, but a signal handled while casadi converts arguments is
#: swallowed there (casadi's typemaps try the next conversion), and the run
#: went on to write its outputs; this flag stops every later write.
_termination = {"requested": False}


def request_termination(flag: bool = True) -> None:
    """Mark the run as terminated (``True``) or clear the mark; outputs are refused while it is set."""
    _termination["requested"] = flag


def termination_requested() -> bool:
    """Whether :func:`request_termination` marked the run as terminated."""
    return _termination["requested"]


def atomic_write_bytes(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically (temporary file, fsync, rename)."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if target.is_dir():
        raise IsADirectoryError(21, "is a folder, expected a file name", str(target))
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp makes the file private (0600); give it the mode a plain open() would
        os.chmod(tmp, _existing_mode(target))
        if termination_requested():
            raise SystemExit(143)  # the old file stays; the temporary one is removed below
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def _existing_mode(target: Path) -> int:
    """Permission bits for the new file: those of the file it replaces, else 0666 less the umask."""
    try:
        return target.stat().st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def atomic_write_text(path: str | Path, text: str) -> None:
    """Write text as UTF-8, atomically (see :func:`atomic_write_bytes`)."""
    atomic_write_bytes(path, text.encode("utf-8"))


def write_json(path: str | Path, obj: Any) -> None:
    """Write a pydantic model, dict or list as indented JSON, atomically.

    JSON has no NaN or infinity; a value that is not finite (e.g. a residual
    at a failed iterate) is written as ``null`` rather than as a non-standard
    token other programs cannot read, and rather than losing the whole file.
    """
    if hasattr(obj, "model_dump"):
        obj = obj.model_dump(mode="json")
    text = json.dumps(json_safe(obj), indent=2, allow_nan=False, default=_default) + "\n"
    atomic_write_text(path, text)


def json_safe(obj: Any) -> Any:
    """A copy of ``obj`` with non-finite floats replaced by ``None`` (numpy scalars and arrays included)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: json_safe(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_safe(v) for v in obj]
    if type(obj).__module__ == "numpy":
        return json_safe(_default(obj))
    return obj


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
