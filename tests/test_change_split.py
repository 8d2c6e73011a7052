"""The Shapley split of the change in P(inside) (change.py): exact additivity with no
rescaling, exactly zero for an unchanged ingredient, and sane parts when the ingredients
offset each other.

Oracle: the Shapley value (Shapley 1953, "A value for n-person games", Contributions to the
Theory of Games II), the average marginal contribution over the 3! orders, computed here
from scipy's Student-t distribution directly.
"""

from __future__ import annotations

import itertools
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.configuration import set_hypothesis_home_dir
from scipy import optimize, stats

from riskreport.rounds import change

LEVELS = np.arange(1, 100) / 100
# Hypothesis keeps a cache of constants; keep it out of the source tree.
set_hypothesis_home_dir(Path(tempfile.gettempdir()) / "riskreport-hypothesis")


def _p(centre: float, scale: float, band: tuple[float, float], df: float) -> float:
    t = stats.t(df, loc=centre, scale=scale)
    return float(t.cdf(band[1]) - t.cdf(band[0]))


def _side(centre: float, scale: float, band: tuple[float, float], df: float) -> change.Side:
    # A Student-t shape: its percentiles are not exactly normal-score linear, so the shape
    # rebuilt from them differs from the stored P(inside) by a little, as with real fits.
    offsets = stats.t.ppf(LEVELS, df, 0, scale)
    return change.Side(centre, band, LEVELS, offsets, _p(centre, scale, band, df))


def _shapley(before: tuple, now: tuple, df: float) -> np.ndarray:
    """Average marginal contribution of (centre, scale, band) over the six orders."""
    parts = np.zeros(3)
    for order in itertools.permutations(range(3)):
        mix = list(before)
        for player in order:
            previous = _p(*mix, df)
            mix[player] = now[player]
            parts[player] += _p(*mix, df) - previous
    return parts / 6


def test_offsetting_ingredients_keep_their_own_parts() -> None:
    # The centre moves toward the upper edge (P(inside) falls), the band moves up and the
    # spread narrows (P(inside) rises), the spread chosen so the total is ~0. A ratio of
    # the exact to the rebuilt total would blow the parts up or squash them.
    df = 4.0
    before = (2.0, 0.8, (1.0, 3.0))
    centre, band = 2.7, (1.2, 3.2)
    target = _p(*before, df)
    scale = optimize.brentq(lambda s: _p(centre, s, band, df) - target, 0.3, 0.8, xtol=1e-14)
    now = (centre, scale, band)
    b, n = _side(*before, df), _side(*now, df)
    assert abs(n.p_inside - b.p_inside) < 1e-9
    parts = change.decompose(b, n)
    oracle = _shapley(before, now, df)
    assert min(abs(oracle)) > 0.01  # the parts really are large and offsetting
    assert parts == pytest.approx(oracle, abs=2e-3)
    assert sum(parts) == pytest.approx(n.p_inside - b.p_inside, abs=1e-15)


# derandomize: the same examples on every run; database=None: nothing written to the tree.
@settings(max_examples=25, deadline=None, derandomize=True, database=None)
@given(
    c=st.tuples(st.floats(0.0, 4.0), st.floats(0.0, 4.0)),
    s=st.tuples(st.floats(0.3, 2.0), st.floats(0.3, 2.0)),
    lower=st.tuples(st.floats(0.0, 2.0), st.floats(0.0, 2.0)),
    width=st.tuples(st.floats(0.5, 3.0), st.floats(0.5, 3.0)),
    moves=st.tuples(st.booleans(), st.booleans(), st.booleans()),
    df=st.sampled_from([3.0, 6.0, 50.0]),
)
def test_parts_add_up_and_unchanged_ingredients_get_zero(
    c: tuple[float, float],
    s: tuple[float, float],
    lower: tuple[float, float],
    width: tuple[float, float],
    moves: tuple[bool, bool, bool],
    df: float,
) -> None:
    before = (c[0], s[0], (lower[0], lower[0] + width[0]))
    now = tuple(
        new if move else old
        for old, new, move in zip(
            before, (c[1], s[1], (lower[1], lower[1] + width[1])), moves, strict=True
        )
    )
    b, n = _side(*before, df), _side(*now, df)
    parts = change.decompose(b, n)
    total = n.p_inside - b.p_inside
    assert sum(parts) == pytest.approx(total, abs=1e-14)  # efficiency, no rescaling
    for part, move, old, new in zip(parts, moves, before, now, strict=True):
        if not move or old == new:
            assert part == 0.0  # null player: exactly zero
    assert parts == pytest.approx(_shapley(before, now, df), abs=3e-3)
