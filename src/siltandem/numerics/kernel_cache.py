"""Keep numba's on-disk cache of the compiled kernels consistent with their sources.

numba keys a cached function by the file that defines it (its modification stamp), not by the
files whose jitted functions it inlines. ``solve/kernels.py`` inlines the laws of
``laws/compiled.py``, which inlines ``laws/compiled_bulk.py``: editing a law alone would leave
the solver running the old compiled law from the cache (seen once: a string's MPP reported from
a stale subcell law). :func:`drop_stale_kernels` hashes every kernel source together and, when
the hash differs from the one recorded beside the cache, deletes the cached kernels of all of
them, so the next call compiles afresh (about 10-20 s, once).

A package installed where the cache folder cannot be written has no numba cache to go stale
(numba then caches elsewhere, per user, keyed the same way); nothing is done there.
"""
import hashlib
from pathlib import Path

#: the kernel sources, relative to the package folder (every file with @numba.njit(cache=True))
KERNEL_SOURCES = ("laws/compiled.py", "laws/compiled_bulk.py", "solve/kernels.py",
                  "laws/compiled_isotype.py", "laws/field_emission.py", "laws/compiled_fermi.py",
                  "laws/compiled_field_fermi.py", "laws/compiled_untabled.py")
#: sources with no kernel of their own whose functions a kernel module compiles and inlines
#: (laws/compiled_bulk.py compiles laws/silicon.py's Schenk band shift): hashed and dropped alike
INLINED_SOURCES = ("laws/silicon.py",)
#: package folders already checked in this process (every kernel module asks; one check serves)
_CHECKED = set()
#: the file, in laws/__pycache__, that records the hash of the sources the cache was built from
STAMP_NAME = "siltandem-kernel-sources.sha256"


def sources_digest(package_folder):
    """SHA-256 of the kernel sources' bytes, in KERNEL_SOURCES + INLINED_SOURCES order (hex)."""
    digest = hashlib.sha256()
    for name in KERNEL_SOURCES + INLINED_SOURCES:
        path = Path(package_folder) / name
        digest.update(name.encode())
        digest.update(path.read_bytes() if path.exists() else b"")
    return digest.hexdigest()


def drop_stale_kernels(package_folder, *, once=False):
    """Delete numba's cached kernels of every kernel source when any source changed since they
    were cached; record the new hash. Returns True when something was deleted. Every kernel
    module calls it before defining its kernels (numba reads its cache at a kernel's first call,
    so any module imported on its own is covered); with ``once`` (the modules' calls) the check
    runs once per process and folder."""
    package_folder = Path(package_folder).resolve()
    if once and package_folder in _CHECKED:
        return False
    _CHECKED.add(package_folder)
    stamp = package_folder / "laws" / "__pycache__" / STAMP_NAME
    try:
        digest = sources_digest(package_folder)
        if stamp.exists() and stamp.read_text().strip() == digest:
            return False
        dropped = False
        for name in KERNEL_SOURCES + INLINED_SOURCES:
            cache = (package_folder / name).parent / "__pycache__"
            prefix = Path(name).stem + "."
            for entry in cache.glob(prefix + "*.nb[ic]"):
                entry.unlink()
                dropped = True
        stamp.parent.mkdir(exist_ok=True)
        stamp.write_text(digest + "\n")
        return dropped
    except OSError:          # a read-only install: numba's own per-user cache, nothing to keep
        return False
