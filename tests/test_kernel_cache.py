"""numba's cache of the kernels follows every kernel source, not only the file defining each kernel
(numba keys a cached function by its own file's stamp; documented in numba's "Cache sharing" /
"Cache invalidation" notes: a change to an inlined function in another file is not seen).
Contract test of numerics/kernel_cache.py on a package folder made in tmp_path."""
from siltandem.numerics.kernel_cache import KERNEL_SOURCES, drop_stale_kernels


def _package(tmp_path):
    for name in KERNEL_SOURCES:
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(f"# {name}\n")
        cache = path.parent / "__pycache__"
        cache.mkdir(exist_ok=True)
        (cache / f"{path.stem}.law-10.py311.nbi").write_bytes(b"index")
        (cache / f"{path.stem}.law-10.py311.1.nbc").write_bytes(b"code")
        (cache / f"{path.stem}.cpython-311.pyc").write_bytes(b"bytecode")
    return tmp_path


def _cached(folder):
    return sorted(p.name for p in folder.rglob("*.nb[ic]"))


def test_a_changed_inlined_source_drops_every_cached_kernel(tmp_path):
    folder = _package(tmp_path)
    assert drop_stale_kernels(folder)            # no record yet: a cache of unknown sources goes
    assert _cached(folder) == []
    assert len(list(folder.rglob("*.pyc"))) == len(KERNEL_SOURCES)   # Python's bytecode stays
    # rebuilt by numba, sources unchanged: kept
    _package(folder)
    for name in KERNEL_SOURCES:                   # _package rewrote the same bytes
        assert (folder / name).read_text() == f"# {name}\n"
    assert not drop_stale_kernels(folder)
    assert len(_cached(folder)) == 2 * len(KERNEL_SOURCES)
    # only the inlined law changes: the solver's kernels go too, not only the law's own
    (folder / "laws/compiled_bulk.py").write_text("# changed\n")
    assert drop_stale_kernels(folder)
    assert _cached(folder) == []


def test_a_read_only_or_missing_cache_is_left_alone(tmp_path):
    assert drop_stale_kernels(tmp_path / "nowhere") is False
