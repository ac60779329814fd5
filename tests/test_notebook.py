"""At home in a notebook (issue 20): plots leave matplotlib's backend alone, the summary's
warnings reach Python's ``warnings``, a Result prints as a few lines.

Contract tests of our own API (no outside check values: the numbers shown are checked against
published values in test_solve.py and test_spectra.py). The matplotlib behaviour relied on is
documented: ``matplotlib.use`` sets the backend for the whole process and ``get_backend``
reports it (matplotlib API reference, ``matplotlib.use``).
"""
import os
from pathlib import Path
import subprocess
import sys
import textwrap
import warnings

import pytest

import siltandem
from siltandem import ModelWarning, load_stack, run_stack




ROOT = Path(__file__).resolve().parents[1]
STACKS = ROOT / "stacks"

#: every public plot function called without and with axes, in a process whose backend the user
#: chose ("svg": non-interactive, always available); the backend must stay the user's
PLOTS = textwrap.dedent("""
    import sys
    import matplotlib
    matplotlib.use("svg")
    import matplotlib.pyplot as plt
    from matplotlib.figure import Figure
    import siltandem
    from siltandem.report.plots import plot_concentration
    from siltandem.studies.interface import plot_interface
    from siltandem.studies.losses import plot_waterfall
    from siltandem.studies.maps import plot_map
    from siltandem.studies.matching import plot_matching
    from siltandem.studies.placements import plot_placements
    from siltandem.studies.yield_report import plot_yield

    stacks = sys.argv[1]
    dual = siltandem.load_stack(f"{stacks}/demo_dual.toml")
    result = siltandem.run_stack(dual, curve_points=50)
    gap = siltandem.parse_vary("top.gap_eV=1.6:1.9:3", dual)
    absorb = siltandem.parse_vary("top.absorptance=0.8:1:3", dual)
    table = siltandem.design_map(dual, gap, absorb, progress=False)
    matched, matches = siltandem.match_currents(dual, siltandem.parse_vary(
        "top.absorptance=0.5:1:5", dual), progress=False)
    faces = siltandem.run_stack(siltandem.load_stack(f"{stacks}/demo_interfaces.toml"),
                                curve_points=50)
    face = next(e for e in faces.circuit.elements if e.kind == "isotype")
    calls = {
        "plot_iv": (lambda ax: siltandem.plot_iv(result, ax), 1),
        "Result.plot": (lambda ax: result.plot(ax=ax), 1),
        "plot_concentration": (lambda ax: plot_concentration(
            siltandem.concentration_series(dual, [1.0, 10.0]), ax), 1),
        "plot_map": (lambda ax: plot_map(table, gap, absorb, ax=ax), 1),
        "plot_matching": (lambda axes: plot_matching(matched, absorb, matches, axes), 2),
        "plot_waterfall": (lambda ax: plot_waterfall(siltandem.loss_waterfall(dual), ax), 1),
        "plot_placements": (lambda axes: plot_placements(siltandem.rank_placements(
            siltandem.load_stack(f"{stacks}/demo_placements.toml"), progress=False), axes), 2),
        "plot_interface": (lambda axes: plot_interface(face, 298.15, 0.0, axes), 2),
        "plot_yield": (lambda axes: plot_yield(siltandem.annual_yield(dual, "demo"), axes), 3),
    }
    for name, (call, panels) in calls.items():
        call(None)
        print(name, "without axes:", matplotlib.get_backend())
        before = plt.get_fignums()
        figure = Figure()
        axes = figure.subplots(1, panels)
        call(axes if panels > 1 else axes)
        print(name, "with axes:", matplotlib.get_backend(), plt.get_fignums() == before)
""")


def test_no_plot_function_changes_the_backend(tmp_path):
    script = tmp_path / "plots.py"
    script.write_text(PLOTS)
    env = {k: v for k, v in os.environ.items() if k != "MPLBACKEND"}
    done = subprocess.run([sys.executable, str(script), str(STACKS)], capture_output=True,
                          text=True, env=env, timeout=600)
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    assert len(lines) == 18, done.stdout       # nine functions, with and without axes
    for line in lines:
        assert line.split(": ")[1].startswith("svg"), line
    for line in lines[1::2]:                   # given axes, no pyplot figure is opened
        assert line.endswith(" True"), line


def test_the_command_line_draws_off_screen_whatever_the_environment_says(tmp_path):
    # a backend named in the environment that cannot be loaded here (pyplot would fail to
    # import with it): the command line selects its file-only backend itself, before pyplot
    png = tmp_path / "iv.png"
    env = dict(os.environ, MPLBACKEND="module://no_such_backend")
    done = subprocess.run([sys.executable, "-m", "siltandem.cli.main", "run",
                           str(STACKS / "demo_dual.toml"), "--plot", str(png)],
                          capture_output=True, text=True, env=env, timeout=300)
    assert done.returncode == 0, done.stderr
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


# ----------------------------------------------------------------------------------------------
# the summary's warnings reach Python's warnings, once per run_stack


def _issued(stack, **options):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = run_stack(stack, curve_points=50, **options)
    return result, [w for w in caught if issubclass(w.category, ModelWarning)]


def test_every_listed_warning_is_issued_once():
    stack = load_stack(STACKS / "demo_tunnel_limit.toml")
    result, issued = _issued(stack)
    listed = result.summary["warnings"]
    assert len(listed) == 2 and len(issued) == len(listed)
    for text, warning in zip(listed, issued):
        assert str(warning.message) == f"{result.summary['stack']}: {text}"
        assert warning.filename == __file__      # points at the caller's line, not ours
    with pytest.warns(ModelWarning) as record:
        run_stack(stack, curve_points=50)
    assert ["driven past its peak" in str(w.message) for w in record] == [True, False]
    assert issubclass(ModelWarning, UserWarning) and siltandem.ModelWarning is ModelWarning


def test_a_blocking_interface_is_a_warning():
    with pytest.warns(ModelWarning, match=r"isotype interface 'hole interface' blocks"):
        run_stack(load_stack(STACKS / "demo_interfaces.toml"), curve_points=50)


def test_a_stack_without_warnings_issues_none():
    result, issued = _issued(load_stack(STACKS / "demo_dual.toml"))
    assert result.summary["warnings"] == [] and issued == []
    with warnings.catch_warnings():
        warnings.simplefilter("error", ModelWarning)
        run_stack(load_stack(STACKS / "demo_dual.toml"), curve_points=50)


def test_the_command_line_prints_each_warning_once_even_with_warnings_as_errors():
    done = subprocess.run([sys.executable, "-W", "error", "-m", "siltandem.cli.main", "run",
                           str(STACKS / "demo_tunnel_limit.toml")],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert (done.stdout + done.stderr).count("driven past its peak") == 1
    assert "ModelWarning" not in done.stderr


# ----------------------------------------------------------------------------------------------
# a short repr and a notebook summary


def test_the_repr_is_one_short_line_with_the_headline_numbers():
    result = run_stack(load_stack(STACKS / "demo_dual.toml"), curve_points=50)
    s = result.summary
    text = repr(result)
    assert "\n" not in text and len(text) <= 400, text
    for shown in (f"'{s['stack']}'", "am1.5g", f"efficiency {s['efficiency_pct']:.2f} %",
                  f"Voc {s['voc_V']:.4f} V", f"Jsc {s['jsc_mA_cm2']:.3f} mA/cm2",
                  f"fill factor {s['fill_factor_pct']:.2f} %",
                  f"MPP {s['mpp_V']:.4f} V x {s['mpp_mA_cm2']:.3f} mA/cm2", "0 warnings"):
        assert shown in text, (shown, text)
    html = result._repr_html_()
    assert len(html) < 5000 and html.startswith("<div>") and html.endswith("</div>")
    assert f"{s['efficiency_pct']:.2f}" in html and "top *" in html


def test_the_repr_of_several_strings_and_of_warnings():
    four = run_stack(load_stack(STACKS / "demo_four_terminal.toml"), curve_points=50)
    assert "2 strings" in repr(four) and "Voc" not in repr(four) and len(repr(four)) <= 400
    with pytest.warns(ModelWarning):
        limited = run_stack(load_stack(STACKS / "demo_tunnel_limit.toml"), curve_points=50)
    assert repr(limited).endswith(", 2 warnings>")
    assert "<li>" in limited._repr_html_() and "&#x27;junction&#x27;" in limited._repr_html_()


# ----------------------------------------------------------------------------------------------
# studies are silent unless asked


def test_a_study_prints_no_progress_unless_asked(capsys, monkeypatch):
    from siltandem.studies import progress as progress_module

    monkeypatch.setattr(progress_module, "PROGRESS_DELAY_S", 0.0)     # the line would show at once
    dual = load_stack(STACKS / "demo_dual.toml")
    gap = siltandem.parse_vary("top.gap_eV=1.6:1.9:3", dual)
    absorb = siltandem.parse_vary("top.absorptance=0.8:1:3", dual)
    siltandem.design_map(dual, gap, absorb)
    siltandem.match_currents(dual, absorb)
    assert capsys.readouterr() == ("", "")
    siltandem.design_map(dual, gap, absorb, progress=True)
    assert "rows 9 / 9 (100 %)" in capsys.readouterr().err


# ----------------------------------------------------------------------------------------------
# every JSON output says which version wrote it and from which stack file


@pytest.mark.parametrize("argv", [
    ["run", "{stack}", "--json", "-"],
    ["run", "{stack}", "--suns-range", "1:10:3", "--json", "-"],
    ["map", "{stack}", "--vary", "top.gap_eV=1.6:1.8:3", "--vary", "top.absorptance=0.9:1:2",
     "--json", "-", "--quiet"],
    ["match", "{stack}", "--vary", "top.absorptance=0.5:1:5", "--json", "-", "--quiet"],
    ["losses", "{stack}", "--json", "-"],
    ["yield", "{stack}", "--weather", "demo", "--json", "-"],
])
def test_every_json_output_carries_the_version_and_the_stack_hash(tmp_path, capsys, argv):
    import hashlib
    import json

    from siltandem.cli.main import main

    stack = tmp_path / "s.toml"
    stack.write_bytes((STACKS / "demo_dual.toml").read_bytes())
    assert main([a.format(stack=stack) for a in argv]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["siltandem_version"] == siltandem.__version__
    assert data["stack_sha256"] == hashlib.sha256(stack.read_bytes()).hexdigest()
    if argv[0] == "yield":
        return                        # the yield year's JSON: its own light (the weather)
    # the light used: AM1.5G, whose table is pvlib's ASTMG173.csv (the file read for it)
    import pvlib

    table = Path(pvlib.__file__).parent / "data" / "ASTMG173.csv"
    assert data["light"] == {"spectrum": "am1.5g",
                             "spectrum_sha256": hashlib.sha256(table.read_bytes()).hexdigest(),
                             "suns": 1.0, "temperature_K": 298.15}


def test_csv_and_parquet_outputs_carry_the_provenance(tmp_path, capsys):
    """A CSV spectrum and overrides: the header lines and the Parquet schema metadata say the
    version, the stack file's hash and the light, each hash that of the file's bytes."""
    import hashlib
    import json

    import pandas as pd
    import pyarrow.parquet

    from siltandem.cli.main import main
    from siltandem.result.record import read_provenance_lines

    stack = tmp_path / "s.toml"
    stack.write_bytes((STACKS / "demo_dual.toml").read_bytes())
    light = tmp_path / "flat.csv"
    light.write_text("wavelength_nm,irradiance_W_m2_nm\n300,1.0\n1200,1.0\n")   # invented
    argv = ["map", str(stack), "--vary", "top.gap_eV=1.6:1.8:3", "--vary",
            "top.absorptance=0.9:1:2", "--spectrum", str(light), "--suns", "2",
            "--temperature", "310", "--quiet", "--csv", str(tmp_path / "m.csv"),
            "--parquet", str(tmp_path / "m.parquet"), "--out", str(tmp_path / "out")]
    assert main(argv) == 0, capsys.readouterr().err
    expected = {"siltandem_version": siltandem.__version__,
                "stack_sha256": hashlib.sha256(stack.read_bytes()).hexdigest(),
                "light": {"spectrum": str(light),
                          "spectrum_sha256": hashlib.sha256(light.read_bytes()).hexdigest(),
                          "suns": 2.0, "temperature_K": 310.0}}
    header = read_provenance_lines((tmp_path / "m.csv").read_text())
    assert header == {"siltandem_version": expected["siltandem_version"],
                      "stack_sha256": expected["stack_sha256"],
                      **{f"light.{k}": str(v) for k, v in expected["light"].items()}}
    table = pd.read_csv(tmp_path / "m.csv", comment="#")
    assert len(table) == 6 and "efficiency_pct" in table.columns
    for path in (tmp_path / "m.parquet", tmp_path / "out" / "results.parquet"):
        stored = json.loads(pyarrow.parquet.read_schema(path).metadata[b"siltandem"])
        assert {k: stored[k] for k in expected} == expected, path
    run_csv = tmp_path / "iv.csv"
    assert main(["run", str(stack), "--curve", str(run_csv)]) == 0
    assert read_provenance_lines(run_csv.read_text())["light.spectrum"] == "am1.5g"


def test_the_parquet_options_refuse_before_any_work_without_pyarrow(tmp_path, capsys,
                                                                      monkeypatch):
    from siltandem.cli.main import main

    for name in [m for m in sys.modules if m == "pyarrow" or m.startswith("pyarrow.")]:
        monkeypatch.setitem(sys.modules, name, None)
    monkeypatch.setitem(sys.modules, "pyarrow", None)
    monkeypatch.setitem(sys.modules, "pyarrow.parquet", None)
    for option in ("--parquet", "--out"):
        target = tmp_path / ("t.parquet" if option == "--parquet" else "folder")
        code = main(["map", str(STACKS / "demo_dual.toml"), "--vary", "top.gap_eV=1.6:1.8:3",
                     "--vary", "top.absorptance=0.9:1:2", option, str(target)])
        out, err = capsys.readouterr()
        assert code == 2 and out == "" and "Traceback" not in err
        assert f"{option}: pyarrow.parquet is not installed" in err and "pip install pyarrow" in err
        assert not target.exists()


# ----------------------------------------------------------------------------------------------
# the notebook kept in the repository runs, with its figures inline


def test_the_walkthrough_notebook_runs_with_figures_inline(tmp_path):
    """examples/walkthrough.ipynb executed by nbclient in a fresh Jupyter kernel: no cell fails,
    the figures are PNG displays (the kernel's inline backend, untouched), the map on a
    LocalCluster reads back as exactly its rows, the triple's matches say which pair limits, the
    yield year runs from an EPW file with pvlib's hourly spectra."""
    nbformat = pytest.importorskip("nbformat")
    nbclient = pytest.importorskip("nbclient")
    pytest.importorskip("ipykernel")
    pytest.importorskip("distributed")
    notebook = nbformat.read(ROOT / "examples" / "walkthrough.ipynb", as_version=4)
    assert all(not cell.get("outputs") for cell in notebook.cells if cell.cell_type == "code")
    env_path = os.pathsep.join([str(ROOT / "src"), *filter(None, [os.environ.get("PYTHONPATH")])])
    os.environ["PYTHONPATH"], before = env_path, os.environ.get("PYTHONPATH")
    try:
        nbclient.NotebookClient(notebook, timeout=600, kernel_name="python3",
                                resources={"metadata": {"path": str(ROOT / "examples")}}).execute()
    finally:
        if before is None:
            os.environ.pop("PYTHONPATH")
        else:
            os.environ["PYTHONPATH"] = before
    outputs = [o for cell in notebook.cells if cell.cell_type == "code" for o in cell.outputs]
    assert not [o for o in outputs if o.output_type == "error"]
    figures = [o for o in outputs if o.output_type == "display_data" and "image/png" in o.data]
    assert len(figures) == 3                                   # the I-V, the map, the year
    text = "".join(o.get("text", "") for o in outputs if o.output_type == "stream")
    assert "63 designs; 63 rows read back from the folder" in text
    html = [o.data["text/html"] for o in outputs if "text/html" in o.get("data", {})]
    assert any("efficiency" in h for h in html)                 # the Result's notebook summary
    assert any("pair_limits" in h for h in html)
    # the yield year from an EPW file through pvlib.iotools, with pvlib's SPECTRL2 spectra
    assert "EPW file, " in text and "spectra: SPECTRL2 per hour" in text
    assert "annual energy" in text and "energy-weighted efficiency" in text
    assert "Pending" not in "".join(c.source for c in notebook.cells if c.cell_type == "markdown")


def test_the_result_and_the_stack_carry_the_hash_of_the_bytes_read(tmp_path):
    import hashlib

    stack = tmp_path / "s.toml"
    stack.write_bytes((STACKS / "demo_dual.toml").read_bytes())
    loaded = load_stack(stack)
    stack.write_text("edited after loading\n")     # the hash is of what was read, not of now
    digest = hashlib.sha256((STACKS / "demo_dual.toml").read_bytes()).hexdigest()
    assert loaded.source_sha256 == digest
    summary = run_stack(loaded, curve_points=50).summary
    assert summary["stack_sha256"] == digest and summary["siltandem_version"] == siltandem.__version__
