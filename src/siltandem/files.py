"""Writing output files atomically: a temporary file in the same folder, then a rename.

An interrupted write leaves the old file or none, never half of a new one.
"""
import errno
import os
from pathlib import Path
import tempfile

from .errors import StackError


#: what an operating-system error on writing means, in plain words
_WRITE_FAILURES = {errno.ENOSPC: "the disk is full", errno.EDQUOT: "the disk quota is used up",
                   errno.EROFS: "the file system is read-only",
                   errno.EACCES: "permission denied", errno.EPERM: "permission denied"}


def _cannot_write(path, exc):
    reason = (_WRITE_FAILURES.get(exc.errno) or exc.strerror or str(exc)
              or exc.__class__.__name__)
    return StackError(f"cannot write the output file: {reason}", file=path, where="output",
                      fix="free some space, or give a path in a folder you can write to")


def write_atomic(path, data):
    """Write ``data`` (str or bytes) to ``path`` atomically; creates the parent folder.

    A full disk, a read-only file system or a folder without write permission raises
    StackError naming the path and the reason; the temporary file is removed.
    """
    path = Path(path)
    mode = "wb" if isinstance(data, bytes) else "w"
    temporary = None
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp",
                                             dir=path.parent)
        with os.fdopen(handle, mode, **({} if mode == "wb" else {"encoding": "utf-8"})) as f:
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        os.replace(temporary, path)
    except BaseException as exc:
        if temporary is not None and os.path.exists(temporary):
            os.unlink(temporary)
        if isinstance(exc, OSError):
            raise _cannot_write(path, exc) from None
        raise
    return path


def save_figure_atomic(figure, path):
    """Save a matplotlib figure atomically; the format follows the suffix (.png, .svg, .pdf)."""
    import io

    path = Path(path)
    buffer = io.BytesIO()
    figure.savefig(buffer, format=path.suffix.lstrip(".").lower() or "png", dpi=150,
                   bbox_inches="tight")
    return write_atomic(path, buffer.getvalue())
