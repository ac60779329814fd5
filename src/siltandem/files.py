"""Output files: checked before any work, written atomically, never over an input.

:func:`check_outputs` refuses, before a command does any work, an output path that is one of the
files the command reads (the same file also through a symlink or a hard link), that is no
regular-file path (a folder, a device, a pipe or socket, a path under a file, a missing folder),
or that two outputs share. :func:`write_atomic` writes a temporary file in the same folder, then
renames it: an interrupted write leaves the old file or none, never half of a new one. A new file
gets the permissions the umask allows (0644 under umask 022); a replaced file keeps its mode.
A full disk or a read-only folder is a StackError naming the path, never a traceback.
"""
import errno
import hashlib
import os
from pathlib import Path
import stat
import tempfile

from siltandem.errors import StackError


def _umask():
    """The process's umask, read without changing it (Linux /proc), else by setting it back."""
    try:
        with open("/proc/self/status", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _mode_for(target):
    """Permission bits for the file written at ``target``: an existing file's, else 0666 & ~umask
    (set-id bits are never carried over)."""
    try:
        return stat.S_IMODE(os.stat(target).st_mode) & ~(stat.S_ISUID | stat.S_ISGID)
    except OSError:
        return 0o666 & ~_umask()


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

    A symlink is followed: its target is replaced, the link stays. The file's mode is the
    replaced file's, or what the umask allows for a new one. A full disk, a read-only file
    system or a folder without write permission raises StackError naming the path and the
    reason; the temporary file is removed.
    """
    path = Path(path)
    target = Path(os.path.realpath(path))
    mode = "wb" if isinstance(data, bytes) else "w"
    temporary = None
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        permissions = _mode_for(target)
        handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp",
                                             dir=target.parent)
        with os.fdopen(handle, mode, **({} if mode == "wb" else {"encoding": "utf-8"})) as f:
            f.write(data)
            f.flush()
            os.fchmod(f.fileno(), permissions)
            os.fsync(f.fileno())
        os.replace(temporary, target)
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


# ----------------------------------------------------------------------------------------------
# checks before any work

def _stat(path):
    try:
        return os.stat(path)
    except (OSError, ValueError):
        return None


def _same_file(a, b):
    """True when the two paths name one file: equal resolved paths, or one device and inode."""
    if os.path.realpath(a) == os.path.realpath(b):
        return True
    first, second = _stat(a), _stat(b)
    return (first is not None and second is not None and first.st_dev == second.st_dev
            and first.st_ino == second.st_ino)


def _through(path, source):
    """`` (same file as X)`` when the output reaches the input through another name."""
    if os.path.abspath(path) == os.path.abspath(source):
        return ""
    how = "a symlink" if os.path.realpath(path) == os.path.realpath(source) else "a hard link"
    return f" {_shown(source)} (the same file, through {how})"


def _kind(mode):
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISFIFO(mode):
        return "a pipe"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def _shown(path):
    text = str(path)
    return text if len(text) <= 120 else "..." + text[-117:]


def _check_folder_for(option, path, folder, *, create=False):
    """The folder an output goes into: it exists (or, with ``create``, its first existing
    ancestor is a folder), it is a folder, and we may write into it."""
    fix = f"give {option} a path in an existing folder you can write to"
    probe = Path(folder)
    while True:
        try:
            info = os.stat(probe)
        except FileNotFoundError:
            if not create:
                raise StackError(f"{_shown(path)}: the folder {_shown(probe)} does not "
                                 "exist", where=option,
                                 fix=f"create it first (mkdir -p {_shown(probe)}), or {fix}") \
                    from None
            if probe.parent == probe:
                break
            probe = probe.parent
            continue
        except NotADirectoryError:
            probe = probe.parent    # an ancestor is a file: reported below when reached
            continue
        except OSError as exc:
            raise StackError(f"{_shown(path)}: cannot look at {_shown(probe)} "
                             f"({exc.strerror})", where=option, fix=fix) from None
        if not stat.S_ISDIR(info.st_mode):
            raise StackError(f"{_shown(path)} lies under {_shown(probe)}, which is "
                             f"{'a file' if stat.S_ISREG(info.st_mode) else _kind(info.st_mode)}"
                             ", not a folder", where=option, fix=fix)
        if not os.access(probe, os.W_OK | os.X_OK):
            raise StackError(f"{_shown(path)}: no permission to write in "
                             f"{_shown(probe)}", where=option, fix=fix)
        return


def check_outputs(outputs, inputs=(), folders=()):
    """Refuse, before any work, outputs that would replace an input or are no file path.

    Parameters
    ----------
    outputs : iterable of (option, path)
        Files the command will write (``path`` None: not asked for; ``-``: standard output).
    inputs : iterable of (what, path)
        Files the command reads (``what`` names it in the message: "the stack file").
    folders : iterable of (option, path)
        Folders the command writes into (a study's ``--out``): a folder or creatable.

    Raises
    ------
    StackError
        Naming the option, the path, what is wrong and the fix. Nothing has been written.
    """
    inputs = [(what, Path(p)) for what, p in inputs if p is not None and _stat(p) is not None]
    wanted = []
    for option, path in outputs:
        if path is None or str(path) == "-":
            continue
        fix = f"give {option} another path"
        if not str(path).strip():
            raise StackError(f"{option} is an empty path", where=option, fix=fix)
        path = Path(path)
        try:
            info = os.stat(path)
        except FileNotFoundError:
            info = None
        except NotADirectoryError:
            info = None     # a parent is a file: _check_folder_for says which
        except OSError as exc:
            raise StackError(f"{_shown(path)}: cannot look at it ({exc.strerror})",
                             where=option, fix=fix) from None
        if info is not None and not stat.S_ISREG(info.st_mode):
            raise StackError(f"{_shown(path)} is {_kind(info.st_mode)}, not a file "
                             "path", where=option,
                             fix=f"give {option} the path of a file to write")
        _check_folder_for(option, path, Path(os.path.realpath(path)).parent)
        for what, source in inputs:
            if _same_file(path, source):
                raise StackError(f"{_shown(path)} is {what}{_through(path, source)}: writing "
                                 "it would replace an input of this run", where=option,
                                 fix=fix + " (outputs never replace inputs)")
        wanted.append((option, path))
    for option, path in folders:
        if path is None:
            continue
        fix = f"give {option} a folder (it is created if missing)"
        if not str(path).strip():
            raise StackError(f"{option} is an empty path", where=option, fix=fix)
        path = Path(path)
        for what, source in inputs:
            if _same_file(path, source):
                raise StackError(f"{_shown(path)} is {what}{_through(path, source)}, not "
                                 "a folder", where=option, fix=fix)
        info = _stat(path)
        if info is not None and not stat.S_ISDIR(info.st_mode):
            raise StackError(f"{_shown(path)} is "
                             f"{'a file' if stat.S_ISREG(info.st_mode) else _kind(info.st_mode)}"
                             ", not a folder", where=option, fix=fix)
        _check_folder_for(option, path, path if info is not None else path.parent,
                          create=True)
        wanted.append((option, path / "results.parquet"))
    for option, path in outputs:
        for other, folder in folders:
            if path is not None and folder is not None and str(path) != "-" \
                    and _same_file(path, folder):
                raise StackError(f"{_shown(path)} is also the {other} folder",
                                 where=option, fix="give each output its own path")
    for k, (option, path) in enumerate(wanted):
        for other, second in wanted[:k]:
            if _same_file(path, second):
                raise StackError(f"{other} and {option} name the same file {_shown(path)}",
                                 where=option,
                                 fix="give each output its own path")


def file_digest(path):
    """Hex digest of a file's bytes; ``"missing"`` or ``"unreadable: ..."`` when it has none."""
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except FileNotFoundError:
        return "missing"
    except OSError as error:
        return f"unreadable: {error.strerror}"
