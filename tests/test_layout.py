"""The package layout contract: one package per pipeline stage, imports run down the stages only.

The stages, bottom to top, are listed in STAGES. A module may import from its own stage or any stage
below it, never above; no group of modules may import each other in a cycle; no private name
(``_x``) is imported from another module; every module belongs to a stage; at most
MAX_LOOSE_MODULES ``.py`` files sit directly in ``src/siltandem/``, and no module is longer than
MAX_MODULE_LINES. Imports inside functions count like any other. DEVELOPERS.md ("Architecture")
says where a new module goes. (A project rule of our own, checked with Python's ast module; no
outside source.)
"""
import ast
from pathlib import Path

import networkx as nx
import pytest

PACKAGE = "siltandem"
SOURCE = Path(__file__).resolve().parents[1] / "src" / PACKAGE

#: bottom to top: each entry is a package folder, or a loose module of the root
STAGES = [
    {"constants", "units", "errors", "files", "text", "version"},   # leaves
    {"numerics"},
    {"laws"},
    {"materials"},
    {"stack"},
    {"circuit"},
    {"optics"},
    {"solve"},
    {"report"},      # renders result data (duck-typed); Result.plot / text delegate to it
    {"result"},
    {"studies"},
    {"cli"},
    {""},                                                            # the public API (__init__)
]
MAX_LOOSE_MODULES = 8
MAX_MODULE_LINES = 800


def _modules():
    found = {}
    for path in sorted(SOURCE.rglob("*.py")):
        parts = list(path.relative_to(SOURCE).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        found[".".join(parts)] = path
    return found


MODULES = _modules()


def _show(path):
    """A path relative to src/, as it appears in messages."""
    try:
        return str(path.relative_to(SOURCE.parent))
    except ValueError:
        return str(path)


def _stage(module):
    top = module.split(".")[0] if module else ""
    for level, members in enumerate(STAGES):
        if top in members:
            return level
    return None


def _resolve(name):
    """The module a dotted import target lives in (the longest known prefix)."""
    while name and name not in MODULES:
        name = name.rpartition(".")[0]
    return name


def _imports(module, path):
    """(line, imported module, imported names) for every import of this package in ``path``."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    is_package = path.name == "__init__.py"
    base = module if is_package else module.rpartition(".")[0]
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name == PACKAGE or alias.name.startswith(PACKAGE + "."):
                    yield node.lineno, _resolve(alias.name[len(PACKAGE) + 1:]), []
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                anchor = base.split(".") if base else []
                anchor = anchor[:len(anchor) - (node.level - 1)] if node.level > 1 else anchor
                target = ".".join(anchor + ([node.module] if node.module else []))
            elif node.module and (node.module == PACKAGE or node.module.startswith(PACKAGE + ".")):
                target = node.module[len(PACKAGE) + 1:]
            else:
                continue
            names = [a.name for a in node.names]
            # "from package import module" imports the module itself
            for name in names:
                full = f"{target}.{name}" if target else name
                if full in MODULES:
                    yield node.lineno, full, []
                else:
                    yield node.lineno, _resolve(target), [name]


def _edges():
    for module, path in MODULES.items():
        for line, target, names in _imports(module, path):
            if target != module:
                yield module, path, line, target, names


def test_every_module_belongs_to_a_stage():
    unplaced = [_show(path) for module, path in MODULES.items()
                if _stage(module) is None]
    assert not unplaced, ("modules outside every stage (put them in a stage package, or add the "
                          f"package to STAGES in tests/test_layout.py and DEVELOPERS.md): {unplaced}")


def test_imports_run_down_the_stages():
    upward = []
    for module, path, line, target, _ in _edges():
        if module == "" or target == "":
            continue  # the public API imports everything; nothing imports it back (see below)
        if _stage(target) > _stage(module):
            upward.append(f"{_show(path)}:{line} imports {PACKAGE}.{target} "
                          f"(stage {_stage(target)}) from stage {_stage(module)}")
    assert not upward, "upward imports:\n" + "\n".join(upward)


def test_nothing_imports_the_public_api():
    back = [f"{_show(path)}:{line}" for module, path, line, target, names in
            _edges() if target == "" and module != "" and names]
    assert not back, f"modules importing from {PACKAGE}/__init__.py (import the module itself): {back}"


def test_no_import_cycles():
    graph = nx.DiGraph()
    where = {}
    for module, path, line, target, _ in _edges():
        graph.add_edge(module, target)
        where.setdefault((module, target), f"{_show(path)}:{line}")
    cycles = [sorted(group) for group in nx.strongly_connected_components(graph) if len(group) > 1]
    details = []
    for group in cycles:
        edges = [where[(a, b)] + f" {a} -> {b}" for a in group for b in group if (a, b) in where]
        details.append("; ".join(edges))
    assert not cycles, "import cycles:\n" + "\n".join(details)


def test_no_private_names_across_modules():
    private = [f"{_show(path)}:{line} imports {name} from {PACKAGE}.{target}"
               for module, path, line, target, names in _edges() for name in names
               if name.startswith("_") and not name.startswith("__")]
    assert not private, "private names imported across modules (make them public, or move " \
                        "the code):\n" + "\n".join(private)


def test_few_loose_modules_and_no_long_ones():
    loose = sorted(p.name for p in SOURCE.glob("*.py"))
    assert len(loose) <= MAX_LOOSE_MODULES, loose
    long = {str(p.relative_to(SOURCE.parent)): n for p in MODULES.values()
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_MODULE_LINES}
    assert not long, f"modules over {MAX_MODULE_LINES} lines (split them): {long}"


@pytest.mark.parametrize("bad, message", [
    ("from siltandem.cli.main import main\n", "upward imports"),
    ("from siltandem.circuit.graph import _hidden\n", "private names"),
])
def test_the_contract_catches_what_it_should(tmp_path, monkeypatch, bad, message):
    """The checks above can fail: a module of the laws stage that imports a command (upward) or
    a private name is caught, named by file and line."""
    fake = SOURCE / "laws" / "zz_contract_probe.py"
    fake_modules = dict(MODULES)
    fake_modules["laws.zz_contract_probe"] = tmp_path / "zz_contract_probe.py"
    (tmp_path / "zz_contract_probe.py").write_text(bad, encoding="utf-8")
    monkeypatch.setattr(f"{__name__}.MODULES", fake_modules)
    check = test_imports_run_down_the_stages if "upward" in message else \
        test_no_private_names_across_modules
    with pytest.raises(AssertionError, match=message):
        check()
    assert not fake.exists()


#: what `import siltandem` must offer (issue: a small public API at the top)
PUBLIC_API = ["load_stack", "run_stack", "Result", "design_map", "match_currents", "concentration_series",
              "rank_placements", "loss_waterfall", "annual_yield", "plot_iv", "StackError"]


def test_the_public_api_is_there_and_loaded_lazily():
    import subprocess
    import sys

    probe = ("import sys, siltandem\n"
             "cheap = not any(m in sys.modules for m in ('numpy', 'scipy', 'pandas', 'numba'))\n"
             f"names = {PUBLIC_API!r}\n"
             "found = [n for n in names if n in siltandem.__all__ and getattr(siltandem, n)]\n"
             "print(cheap, len(found), len(names))\n")
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         check=True).stdout.split()
    assert out == ["True", str(len(PUBLIC_API)), str(len(PUBLIC_API))]


def test_the_public_api_is_the_pipeline_itself():
    import siltandem
    from siltandem.result.driver import run_stack
    from siltandem.stack.load import load_stack

    assert siltandem.run_stack is run_stack and siltandem.load_stack is load_stack
    assert issubclass(siltandem.StackError, ValueError)
    with pytest.raises(AttributeError, match="no attribute 'solve_string'"):
        siltandem.__getattr__("solve_string")


@pytest.mark.parametrize("argv", [["--help"], ["materials"], ["materials", "GaAs"], ["run", "--help"]])
def test_help_and_the_materials_list_load_no_heavy_package(argv):
    """Start-up (issue 19): the commands that solve nothing import neither the compiler (numba)
    nor pandas nor pvlib; only `run` and the studies pay for them."""
    import subprocess
    import sys

    probe = ("import sys, contextlib, io\n"
             "from siltandem.cli.main import main\n"
             "with contextlib.redirect_stdout(io.StringIO()):\n"
             "    try:\n"
             f"        main({argv!r})\n"
             "    except SystemExit:\n"
             "        pass\n"
             "print(sorted(m for m in ('numba', 'pandas', 'pvlib', 'matplotlib', 'networkx', 'dask')"
             " if m in sys.modules))\n")
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, check=True)
    assert done.stdout.strip().splitlines()[-1] == "[]", done.stdout + done.stderr
