"""The below / above pair of the charts stays apart for readers with a colour-vision
deficiency and in greyscale.

Simulation: Machado, Oliveira and Fernandes (2009), "A physiologically-based model for
simulation of color vision deficiency", IEEE Transactions on Visualization and Computer
Graphics 15(6), as implemented by the colorspacious package (severity 100 = dichromacy).
Colour difference: CIECAM02-UCS delta E (Luo, Cui and Li 2006), colorspacious' default.
Greyscale: relative luminance of sRGB (IEC 61966-2-1; the WCAG 2 definition).
The thresholds are ours (common practice, no source): a delta E of 20 reads as clearly
different colours; a luminance ratio of 1.5 keeps two lines apart when printed in grey.
"""

from __future__ import annotations

import numpy as np
import pytest

cs = pytest.importorskip("colorspacious")

from riskreport.report.charts import ABOVE, BELOW, OUTCOME_STYLE  # noqa: E402

MIN_DELTA_E = 20.0
MIN_LUMINANCE_RATIO = 1.5


def _rgb(hex_colour: str) -> np.ndarray:
    return np.array([int(hex_colour[i : i + 2], 16) / 255 for i in (1, 3, 5)])


def _luminance(hex_colour: str) -> float:
    c = _rgb(hex_colour)
    linear = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    return float(linear @ np.array([0.2126, 0.7152, 0.0722]))


def _delta_e(a: str, b: str, cvd: str | None) -> float:
    x, y = _rgb(a), _rgb(b)
    if cvd is not None:
        space = {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}
        x = np.clip(cs.cspace_convert(x, space, "sRGB1"), 0, 1)
        y = np.clip(cs.cspace_convert(y, space, "sRGB1"), 0, 1)
    return float(cs.deltaE(x, y, input_space="sRGB1"))


def test_the_simulation_is_live() -> None:
    # A pure red and a pure green nearly merge for a deuteranope (the textbook case):
    # if they did not, the simulation would not be running and the checks below could not fail.
    assert _delta_e("#ff0000", "#00ff00", None) > 50
    assert (
        _delta_e("#cc3333", "#669933", "deuteranomaly") < _delta_e("#cc3333", "#669933", None) / 2
    )


@pytest.mark.parametrize("cvd", [None, "deuteranomaly", "protanomaly"])
def test_below_and_above_stay_apart(cvd: str | None) -> None:
    assert OUTCOME_STYLE["below"]["color"] == BELOW
    assert OUTCOME_STYLE["above"]["color"] == ABOVE
    assert _delta_e(BELOW, ABOVE, cvd) > MIN_DELTA_E


def test_below_and_above_differ_in_greyscale() -> None:
    lighter, darker = sorted((_luminance(BELOW), _luminance(ABOVE)), reverse=True)
    assert (lighter + 0.05) / (darker + 0.05) > MIN_LUMINANCE_RATIO


def test_the_old_pair_fails_for_protanopes() -> None:
    # The earlier blue / claret pair: close for a protanope, which is why "above" moved.
    assert _delta_e("#2f6497", "#9b2f63", "protanomaly") < MIN_DELTA_E
