"""Atomic file writing: a crash never leaves a half-written file behind.

The text goes to a temporary file in the same folder, is flushed to disk, and
is then renamed over the target (``os.replace`` is atomic on POSIX and on
Windows within one volume), so the old file stays intact until the new one is
complete.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path


def atomic_write_text(path: str | os.PathLike[str], text: str, encoding: str = "utf-8") -> None:
    """Write ``text`` to ``path`` atomically, lines ending in ``\n`` on every platform."""
    atomic_write_bytes(path, text.encode(encoding))


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Write ``data`` to ``path`` atomically (temporary file + rename)."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        # mkstemp makes the file private (0600); give it the mode a plain open() would,
        # or the mode of the file it replaces, so saved files stay shareable.
        os.chmod(tmp, _mode_for(target))
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def _mode_for(target: Path) -> int:
    """The permission bits a new file at ``target`` should have."""
    try:
        return target.stat().st_mode & 0o777
    except OSError:
        mask = os.umask(0)  # read the umask (there is no getter) and put it back at once
        os.umask(mask)
        return 0o666 & ~mask
