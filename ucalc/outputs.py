"""Writing output files safely: atomically, never over an input, never over an existing file unless forced.

The text goes to a temporary file in the target's folder, is flushed to disk, then renamed over the target, so a
reader never sees half a file and an interrupted run leaves the old file intact. A run killed between the two
steps leaves its temporary file; the next write to the same folder removes it.
"""

from __future__ import annotations

import errno
import os
import re
import stat
import tempfile
import time
from collections.abc import Iterable
from pathlib import Path

from .errors import OutputError

__all__ = ["OutputError", "write_atomic"]

STARTED = time.time()  # temporary files older than this run, of a process that is gone, are stale
_TEMP = re.compile(r"^\..+\.ucalc-(\d+)-[A-Za-z0-9_]+\.tmp$")


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


def _special(path: Path) -> bool:
    """An existing path that is neither a regular file nor a folder: a device, FIFO or socket."""
    try:
        mode = path.stat().st_mode
    except OSError:
        return False
    return not (stat.S_ISREG(mode) or stat.S_ISDIR(mode))


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True  # exists, owned by someone else
    return True


def clean_stale(folder: Path) -> list[Path]:
    """Remove temporary files that a killed ucalc run left in ``folder``: only names of ucalc's own pattern
    (``.NAME.ucalc-PID-XXXXXXXX.tmp``), written before this run started by a process that no longer runs."""
    removed: list[Path] = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        m = _TEMP.match(entry.name)
        if not m or not entry.is_file(follow_symlinks=False):
            continue
        try:
            if entry.stat(follow_symlinks=False).st_mtime >= STARTED or _alive(int(m.group(1))):
                continue
            os.unlink(entry.path)
            removed.append(Path(entry.path))
        except OSError:
            continue
    return removed


def check_target(path: str | Path, *, force: bool = False, inputs: Iterable[str | Path] = ()) -> Path:
    """Refuse an output that is an input, a folder, a device or FIFO (even with ``force``), an existing file
    without ``force``, or in a missing folder."""
    target = Path(path)
    for source in inputs:
        if _same(target, Path(source)):
            raise OutputError(target, "is an input of this command; choose another output file")
    if target.is_dir():
        raise OutputError(target, "is a folder; give a file name")
    if _special(target):
        raise OutputError(target, "is a device, pipe or socket, not a file; ucalc writes only regular files")
    if target.exists() and not force:
        raise OutputError(target, "exists already; use --force to replace it")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(target, f"folder '{folder}' does not exist; create it first")
    return target


def write_atomic(path: str | Path, data: str | bytes, *, force: bool = False,
                 inputs: Iterable[str | Path] = ()) -> Path:
    """Write ``data`` to ``path`` atomically; refuse to replace an input, or an existing file without ``force``.

    A failed write (a full disk) leaves neither a partial file nor a temporary one, and says why with the path.
    Temporary files of killed runs are removed first (:func:`clean_stale`).
    """
    target = check_target(path, force=force, inputs=inputs)
    folder = target.parent if str(target.parent) else Path(".")
    payload = data.encode("utf-8") if isinstance(data, str) else data
    clean_stale(folder)
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{target.name}.ucalc-{os.getpid()}-", suffix=".tmp")
    except OSError as exc:
        raise OutputError(target, f"cannot write here ({exc.strerror})") from None
    try:
        os.chmod(tmp, _mode_for(target))
        with os.fdopen(fd, "wb") as handle:
            handle.write(payload)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, target)
    except OSError as exc:
        Path(tmp).unlink(missing_ok=True)
        full = " (the disk is full)" if exc.errno in (errno.ENOSPC, errno.EDQUOT) else ""
        raise OutputError(target, f"cannot write ({exc.strerror or exc}){full}; nothing was written") from None
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target
