"""solve/spacing.py: where a traced curve's points go (evenly in arc length along its samples).

Checks: numpy.interp and numpy.linspace as the reference for the row-wise interpolation and the
even fractions (bit for bit); the arc length of a straight line is proportional to its own
coordinate (elementary geometry), so points spaced by it are evenly spaced on the line.
"""
import numpy as np

from siltandem.solve.spacing import (PARAMETER_WEIGHT, arc_length, curve_spans, even_fractions,
                                     evenly_spaced, interpolate_rows)


def test_interpolate_rows_is_numpy_interp_row_by_row():
    rng = np.random.default_rng(3)
    xp = np.sort(rng.uniform(-1.0, 2.0, (4, 30)), axis=1)
    xp[1, 10:13] = xp[1, 10]          # repeated abscissae
    fp = rng.normal(size=(4, 30))
    x = rng.uniform(-1.5, 2.5, (4, 17))  # some outside the samples' range
    x[2, 0] = xp[2, -1]
    got = interpolate_rows(x, xp, fp)
    for row in range(4):
        assert np.array_equal(got[row], np.interp(x[row], xp[row], fp[row]))


def test_even_fractions_are_linspace_and_skip_pads_with_zero():
    for n in (2, 3, 57, 401):
        assert np.array_equal(even_fractions(n)[0], np.linspace(0.0, 1.0, n))
    fractions = even_fractions(10, np.array([0, 3]))
    assert np.array_equal(fractions[0], np.linspace(0.0, 1.0, 10))
    assert np.array_equal(fractions[1], np.r_[0.0, 0.0, 0.0, np.linspace(0.0, 1.0, 7)])


def test_points_on_a_straight_line_come_out_evenly_spaced():
    # uneven samples of the line V = s, J = 2 s, t = s (s in [0, 1]): the arc length is
    # (sqrt(2) + PARAMETER_WEIGHT) s, so points even in it are even in s
    s = np.sort(np.r_[0.0, 1.0, np.random.default_rng(5).uniform(0.0, 1.0, 40)])[None, :]
    arc = arc_length(s, 2.0 * s, s)
    assert np.allclose(arc, (np.sqrt(2.0) + PARAMETER_WEIGHT) * s, rtol=1e-13, atol=1e-15)
    placed = evenly_spaced(arc, s, 11)
    assert np.allclose(placed[0], np.linspace(0.0, 1.0, 11), rtol=0, atol=1e-14)


def test_a_sample_without_a_value_counts_by_its_parameter_only():
    t = np.linspace(0.0, 1.0, 5)[None, :]
    v = np.array([[0.0, 1.0, np.nan, 3.0, 4.0]])
    j = np.zeros_like(v)
    assert curve_spans(v, j, t)[0][0, 0] == 4.0
    steps = np.diff(arc_length(v, j, t), axis=1)[0]
    assert np.allclose(steps, [0.25 + 0.05 * 0.25, 0.05 * 0.25, 0.05 * 0.25, 0.25 + 0.05 * 0.25])


def test_a_row_is_placed_the_same_alone_and_in_a_batch():
    rng = np.random.default_rng(7)
    t = np.sort(rng.uniform(0.0, 1.0, (5, 50)), axis=1)
    v, j = np.cumsum(rng.uniform(0, 1, (5, 50)), axis=1), -np.cumsum(rng.uniform(0, 1, (5, 50)), axis=1)
    together = evenly_spaced(arc_length(v, j, t), t, 20, skip=np.array([0, 2, 0, 5, 1]))
    alone = evenly_spaced(arc_length(v[3:4], j[3:4], t[3:4]), t[3:4], 20, skip=np.array([5]))
    assert np.array_equal(together[3], alone[0])
