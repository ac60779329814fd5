"""numba's cache of the kernels follows every kernel source, not only the file defining each kernel
(numba keys a cached function by its own file's stamp; documented in numba's "Cache sharing" /
"Cache invalidation" notes: a change to an inlined function in another file is not seen).
Contract test of numerics/kernel_cache.py on a package folder made in tmp_path."""
from siltandem.numerics.kernel_cache import INLINED_SOURCES, KERNEL_SOURCES, drop_stale_kernels


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


def test_every_kernel_module_checks_the_cache_before_its_kernels():
    """numba reads a kernel's cache at its first call: each module of KERNEL_SOURCES calls
    drop_stale_kernels (or imports laws.compiled, which does) before its first kernel, so that
    importing any one of them alone cannot run a stale compiled law (common practice, no source:
    numba keys a cache entry by its own file only)."""
    from pathlib import Path

    import siltandem

    package = Path(siltandem.__file__).resolve().parent
    for name in KERNEL_SOURCES:
        text = (package / name).read_text(encoding="utf-8")
        first_kernel = text.index("@numba.njit")
        checks = [text.find(marker) for marker in
                  ("drop_stale_kernels(Path(__file__).resolve().parents[1], once=True)",
                   "from siltandem.laws.compiled import")]
        assert any(0 <= at < first_kernel for at in checks), name


def test_the_modules_check_runs_once_per_process(tmp_path):
    """once=True: a second call for the same folder in one process checks nothing more; a plain
    call always checks."""
    folder = tmp_path / "pkg"
    (folder / "laws").mkdir(parents=True)
    drop_stale_kernels(folder, once=True)           # the first call checks and records
    stamp = folder / "laws" / "__pycache__" / "siltandem-kernel-sources.sha256"
    assert stamp.exists()
    stamp.write_text("changed\n")
    assert drop_stale_kernels(folder, once=True) is False
    assert stamp.read_text() == "changed\n"          # not checked again
    drop_stale_kernels(folder)
    assert stamp.read_text() != "changed\n"          # a plain call checks and records afresh


def test_a_changed_inlined_law_source_without_kernels_drops_the_cache(tmp_path):
    """laws/silicon.py has no kernel of its own, but laws/compiled_bulk.py compiles its Schenk band
    shift into the solver's kernels: a change of it drops every cached kernel, its own too (numba
    files a compiled function's cache beside the file defining it; common practice, no source)."""
    folder = _package(tmp_path)
    for name in INLINED_SOURCES:
        path = folder / name
        path.write_text(f"# {name}\n")
        (path.parent / "__pycache__" / f"{path.stem}.schenk_band_shift-1.py311.nbi").write_bytes(b"index")
    drop_stale_kernels(folder)
    _package(folder)
    assert not drop_stale_kernels(folder)
    (folder / "laws/silicon.py").write_text("# changed\n")
    (folder / "laws/__pycache__/silicon.schenk_band_shift-1.py311.nbi").write_bytes(b"index")
    assert drop_stale_kernels(folder)
    assert _cached(folder) == []
