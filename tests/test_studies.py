"""Studies over many designs: current matching and design maps (batched solves, chunked runs)."""
import json

import numpy as np
import pandas as pd
import pytest
from pvlib.spectrum import get_reference_spectra
from scipy import constants

from siltandem import StackError, load_stack, design_map, match_currents, parse_vary
from siltandem.studies.maps import optimum
from siltandem.studies.sweep import design_table, solve_designs
from test_main_job import cli

DUAL = """[conditions]
spectrum = "am1.5g"
temperature_K = 300

[[element]]
kind = "subcell"
name = "top"
gap_eV = 1.73

[[element]]
kind = "subcell"
name = "bottom"
gap_eV = 1.12
"""


def load_stack_text(text, like):
    from pathlib import Path

    path = Path(like.source).with_name("variant.toml")
    path.write_text(text)
    return load_stack(path)


@pytest.fixture
def dual(tmp_path):
    path = tmp_path / "dual.toml"
    path.write_text(DUAL)
    return load_stack(path)


def test_matched_absorptance_equals_the_direct_photon_count(dual):
    # reference: the pvlib ASTM G173 global table, integrated here independently. A top cell of
    # absorptance a above 1.60 eV passes (1 - a) of its band to the bottom cell, so
    # a N_top = N_bottom + (1 - a) N_top  ->  a* = (N_bottom + N_top) / (2 N_top),
    # N_top = photons above 1.60 eV, N_bottom = photons between 1.12 and 1.60 eV.
    table = get_reference_spectra(standard="ASTM G173-03")
    lam = table.index.to_numpy(dtype=float)
    flux = table["global"].to_numpy() * lam * 1e-9 / (constants.h * constants.c)

    def photons_below(limit_nm):
        fine = np.linspace(lam[0], limit_nm, 400_001)
        return np.trapezoid(np.interp(fine, lam, flux), fine)

    hc_ev_nm = constants.h * constants.c / constants.e * 1e9
    n_top = photons_below(hc_ev_nm / 1.60)
    n_bottom = photons_below(hc_ev_nm / 1.12) - n_top
    expected = (n_bottom + n_top) / (2 * n_top)
    dual = load_stack_text(DUAL.replace("1.73", "1.60"), dual)
    variation = parse_vary("top.absorptance=0.5:1:11", dual)
    _, matches = match_currents(dual, variation, progress=False)
    (match,) = matches
    assert match["subcells"] == ["top", "bottom"]
    assert match["value"] == pytest.approx(expected, rel=1e-6)


def test_map_finds_the_published_dual_optimum(dual):
    # R: 45.06 % at 1.73 eV (../shared/REFERENCES.md); issue 6: within 0.02 eV and 0.3 % absolute
    gap = parse_vary("top.gap_eV=1.60:1.90:61", dual)
    absorptance = parse_vary("top.absorptance=0.9:1.0:3", dual)
    table = design_map(dual, gap, absorptance, progress=False)
    best = optimum(table)
    assert best["top.gap_eV"] == pytest.approx(1.73, abs=0.02)
    assert best["top.absorptance"] == 1.0
    assert best["efficiency_pct"] == pytest.approx(45.06, abs=0.3)
    assert list(table.columns[:3]) == ["design", "top.gap_eV", "top.absorptance"]
    for column in ("efficiency_pct", "voc_V", "jsc_mA_cm2", "fill_factor_pct", "mpp_V", "mpp_mA_cm2"):
        assert column in table.columns


def test_triple_map_finds_the_published_optimum(tmp_path):
    # R: 2T triple on Si 49.45 % at 2.01 / 1.50 / 1.12 eV
    path = tmp_path / "triple.toml"
    path.write_text(DUAL.replace('name = "bottom"\ngap_eV = 1.12', 'name = "middle"\ngap_eV = 1.5')
                    + '\n[[element]]\nkind = "subcell"\nname = "bottom"\ngap_eV = 1.12\n')
    stack = load_stack(path)
    top = parse_vary("top.gap_eV=1.93:2.09:17", stack)
    middle = parse_vary("middle.gap_eV=1.44:1.56:13", stack)
    best = optimum(design_map(stack, top, middle, progress=False))
    assert best["top.gap_eV"] == pytest.approx(2.01, abs=0.02)
    assert best["middle.gap_eV"] == pytest.approx(1.50, abs=0.02)
    assert best["efficiency_pct"] == pytest.approx(49.45, abs=0.3)


def test_batched_designs_equal_one_by_one(dual):
    values = np.array([1.6, 1.7, 1.8])
    together = solve_designs(dual, {"top.gap_eV": values})
    for k, value in enumerate(values):
        alone = solve_designs(dual, {"top.gap_eV": np.array([value])})
        assert together["efficiency_pct"][k] == pytest.approx(alone["efficiency_pct"][0],
                                                              rel=1e-12)


def test_parallel_map_equals_in_process(dual, tmp_path):
    gap = parse_vary("top.gap_eV=1.6:1.9:8", dual)
    absorptance = parse_vary("top.absorptance=0.8:1.0:5", dual)
    here = design_map(dual, gap, absorptance, progress=False)
    pooled = design_map(dual, gap, absorptance, progress=False, workers=2, chunk_rows=10,
                        output=tmp_path / "run")
    pd.testing.assert_frame_equal(here[["design", "efficiency_pct", "voc_V"]],
                                  pooled[["design", "efficiency_pct", "voc_V"]],
                                  check_exact=True)
    # a second run of the same study resumes from the chunk files: same table
    again = design_map(dual, gap, absorptance, progress=False, output=tmp_path / "run",
                       chunk_rows=10)
    pd.testing.assert_frame_equal(pooled[["design", "efficiency_pct"]],
                                  again[["design", "efficiency_pct"]], check_exact=True)


@pytest.mark.parametrize("text, message", [
    ("top.gap_eV=1.6:1.9", "is not START:STOP:N"),
    ("nope.gap_eV=1:2:3", "no element named 'nope'"),
    ("top.colour=1:2:3", "has no numeric key 'colour'"),
    ("top.gap_eV=0.1:1.9:5", "outside its physical range"),
    ("gap_eV=1:2:3", "is not NAME.KEY=START:STOP:N"),
])
def test_bad_vary(dual, text, message):
    with pytest.raises(StackError, match=message):
        parse_vary(text, dual)


def test_design_table_is_the_full_grid(dual):
    a = parse_vary("top.gap_eV=1.6:1.9:4", dual)
    b = parse_vary("top.absorptance=0.8:1:3", dual)
    table = design_table([a, b])
    assert len(table) == 12 and table["design"].tolist() == list(range(12))
    assert sorted(set(table["top.gap_eV"])) == pytest.approx(list(a.values))


def test_match_and_map_commands(tmp_path):
    stack = tmp_path / "dual.toml"
    stack.write_text(DUAL.replace("1.73", "1.60"))
    done = cli("match", stack, "--vary", "top.absorptance=0.5:1:21", "--plot", tmp_path / "m.png",
               "--json", tmp_path / "m.json", "--quiet")
    assert done.returncode == 0, done.stderr
    assert "matched: top = bottom" in done.stdout
    assert json.loads((tmp_path / "m.json").read_text())["matches"][0]["subcells"] == ["top",
                                                                                       "bottom"]
    done = cli("map", stack, "--vary", "top.gap_eV=1.6:1.9:7", "--vary",
               "top.absorptance=0.8:1:3", "--csv", tmp_path / "g.csv", "--parquet",
               tmp_path / "g.parquet", "--plot", tmp_path / "g.png", "--quiet")
    assert done.returncode == 0, done.stderr
    frame = pd.read_csv(tmp_path / "g.csv", comment="#")
    assert len(frame) == 21 and "top.gap_eV" in frame.columns
    assert pd.read_parquet(tmp_path / "g.parquet").shape == frame.shape
    bad = cli("map", stack, "--vary", "top.gap_eV=1.6:1.9:7")
    assert bad.returncode == 2 and "map takes two --vary" in bad.stderr


def test_layer_thickness_matching(tmp_path):
    # current matching over a layer key: the matched thickness balances the two photocurrents
    # (each design is compiled on its own: its optics and layer physics change)
    from siltandem.studies.sweep import photocurrents_at
    from test_layer_stacks import HEAD, layer

    text = HEAD + (layer("top emitter", "GaAsP", 80, "n:2e18", composition=0.23,
                         diffusion_length_um=0.4)
                   + layer("top base", "GaAsP", 1000, "p:1e17", composition=0.23,
                           diffusion_length_um=3.0)
                   + layer("tp", "GaAsP", 25, "p:8e19", composition=0.23)
                   + layer("tn", "GaAsP", 25, "n:2e19", composition=0.23)
                   + layer("buffer", "GaP", 100, "n:1e18")
                   + layer("bottom emitter", "Si", 400, "n:5e18", diffusion_length_um=3.0)
                   + layer("bottom base", "Si", 180000, "p:1e16", diffusion_length_um=600))
    path = tmp_path / "dual.toml"
    path.write_text(text + "\n[optics]\nback_reflectance = 0.9\n")
    stack = load_stack(path)
    variation = parse_vary("top base.thickness_nm=400:2000:3", stack)
    table, matches = match_currents(stack, variation, progress=False)
    (match,) = matches
    currents = photocurrents_at(stack, variation.column, match["value"])
    assert currents["top"] == pytest.approx(currents["bottom"], rel=1e-9)
    assert 400 < match["value"] < 2000
    assert table["top.photocurrent_mA_cm2"].is_monotonic_increasing


@pytest.mark.parametrize("text, message", [
    ("nope.thickness_nm=1:2:3", "no layer named 'nope'"),
    ("top base.colour=1:2:3", "has no numeric key 'colour'"),
    ("top base.thickness_nm=-5:2:3", "is outside"),
])
def test_bad_layer_vary(text, message):
    from pathlib import Path

    stack = load_stack(Path(__file__).resolve().parents[1] / "stacks" / "demo_dual_layers.toml")
    with pytest.raises(StackError, match=message):
        parse_vary(text, stack)


def test_map_on_a_dask_cluster_equals_the_local_run(dual):
    # issue 6: a real dask.distributed LocalCluster on loopback gives the local run's table
    distributed = pytest.importorskip("distributed")
    gap = parse_vary("top.gap_eV=1.6:1.9:6", dual)
    absorptance = parse_vary("top.absorptance=0.8:1.0:4", dual)
    local = design_map(dual, gap, absorptance, progress=False, chunk_rows=6)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        remote = design_map(dual, gap, absorptance, progress=False, chunk_rows=6,
                            cluster=cluster.scheduler_address)
    pd.testing.assert_frame_equal(local[["design", "efficiency_pct", "voc_V", "jsc_mA_cm2"]],
                                  remote[["design", "efficiency_pct", "voc_V", "jsc_mA_cm2"]],
                                  check_exact=True)


def test_match_on_a_triple_says_which_pair_limits():
    """The demo triple (invented data) over the top absorptance: top and middle cross where
    silicon has the lowest photocurrent, top and silicon cross where they are the lowest pair.
    Check, independent of the pair bookkeeping: in a series string the current is bounded by the
    smallest photocurrent (Kirchhoff's current law; Green, Solar Cells, 1982, ch. 10), so the solved
    Jsc at a non-limiting crossing follows silicon, not the matched pair."""
    from pathlib import Path

    triple = load_stack(Path(__file__).resolve().parents[1] / "stacks" / "demo_triple.toml")
    variation = parse_vary("top.absorptance=0.5:1:11", triple)
    table, matches = match_currents(triple, variation)
    by_pair = {tuple(m["subcells"]): m for m in matches}
    assert set(by_pair) == {("top", "middle"), ("top", "silicon")}
    for pair, m in by_pair.items():
        jsc = solve_designs(triple, {variation.column: np.array([m["value"]])})["jsc_mA_cm2"][0]
        silicon = table["silicon.photocurrent_mA_cm2"]
        if pair == ("top", "middle"):
            assert m["pair_limits"] is False and m["limiting_subcell"] == "silicon"
            assert m["photocurrent_mA_cm2"] - jsc > 3.0           # far below the pair
            assert jsc <= silicon.max() + 1e-9
        else:
            assert m["pair_limits"] is True and m["limiting_subcell"] == "top"
            assert jsc == pytest.approx(m["photocurrent_mA_cm2"], rel=2e-3)


def test_the_match_command_prints_every_row_and_the_pair_verdict(tmp_path):
    from pathlib import Path

    stack = Path(__file__).resolve().parents[1] / "stacks" / "demo_triple.toml"
    done = cli("match", stack, "--vary", "top.absorptance=0.5:1:31", "--quiet")
    assert done.returncode == 0, done.stderr
    rows = [line for line in done.stdout.splitlines()
            if line.strip() and line.split()[-1] in ("top", "middle", "silicon")]
    assert len(rows) == 31                                       # every row, not every second
    assert "this pair does not limit: silicon has a lower photocurrent" in done.stdout
    assert "this pair limits the string's current there" in done.stdout
