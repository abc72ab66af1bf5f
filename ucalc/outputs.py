"""Writing output files safely: atomically, never over an input, never over an existing file unless forced.

The text goes to a temporary file in the target's folder, is flushed to disk, then renamed over the target, so a
reader never sees half a file and an interrupted run leaves the old file intact.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

from .errors import OutputError

__all__ = ["OutputError", "write_atomic"]


def _same(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except OSError:
        return False


def _mode_for(target: Path) -> int:
    """Permissions of the file being replaced, or the usual ones for a new file under the current umask."""
    if target.exists():
        return target.stat().st_mode & 0o777
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def check_target(path: str | Path, *, force: bool = False, inputs: Iterable[str | Path] = ()) -> Path:
    """Refuse an output that is an input, a folder, an existing file without ``force``, or in a missing folder."""
    target = Path(path)
    for source in inputs:
        if _same(target, Path(source)):
            raise OutputError(target, "is an input of this command; choose another output file")
    if target.is_dir():
        raise OutputError(target, "is a folder; give a file name")
    if target.exists() and not force:
        raise OutputError(target, "exists already; use --force to replace it")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(target, f"folder '{folder}' does not exist; create it first")
    return target


def write_atomic(path: str | Path, data: str | bytes, *, force: bool = False,
                 inputs: Iterable[str | Path] = ()) -> Path:
    """Write ``data`` to ``path`` atomically; refuse to replace an input, or an existing file without ``force``."""
    target = check_target(path, force=force, inputs=inputs)
    folder = target.parent if str(target.parent) else Path(".")
    payload = data.encode("utf-8") if isinstance(data, str) else data
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{target.name}.", suffix=".tmp")
    except OSError as exc:
        raise OutputError(target, f"cannot write here ({exc.strerror})") from None
    try:
        os.chmod(tmp, _mode_for(target))
        with os.fdopen(fd, "wb") as handle:
            handle.write(payload)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target
