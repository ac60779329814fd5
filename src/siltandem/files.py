"""Writing output files atomically: a temporary file in the same folder, then a rename.

An interrupted write leaves the old file or none, never half of a new one.
"""
import os
from pathlib import Path
import tempfile


def write_atomic(path, data):
    """Write ``data`` (str or bytes) to ``path`` atomically; creates the parent folder."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    mode = "wb" if isinstance(data, bytes) else "w"
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(handle, mode, **({} if mode == "wb" else {"encoding": "utf-8"})) as f:
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        os.replace(temporary, path)
    except BaseException:
        if os.path.exists(temporary):
            os.unlink(temporary)
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
