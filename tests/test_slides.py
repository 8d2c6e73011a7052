"""PNG charts and slides: size, resolution, alt text, and the tidy quantile CSV."""

from __future__ import annotations

import csv
import io
import json
import re
from collections.abc import Callable
from pathlib import Path

import pytest
from PIL import Image

from riskreport.report import slides
from tests.conftest import Case, Result


def test_slides_and_pngs(case: Case, run: Callable[..., Result], tmp_path: Path) -> None:
    # Oracle: Pillow reads the pixel size and the pHYs resolution back from the files.
    case.config = case.config.replace('["json", "csv"]', '["json", "png", "slides"]')
    out = tmp_path / "o"
    assert run("build", case.write(), "--out", out, "-q").code == 0
    data = json.loads((out / "assessment-2024-12.json").read_text())
    names = ["outlook", "band-probabilities", "density-h2"]
    for name in names:
        with Image.open(out / f"slides/{name}-2024-12.png") as image:
            # The size the README states: 2667 x 1500 pixels, the 16:9 widescreen slide
            # (13 1/3 x 7.5 in) at 200 dpi with its width rounded to whole pixels.
            assert image.size == (2667, 1500)
            assert image.size[0] == round(image.size[1] * 16 / 9)
            assert image.info["dpi"] == pytest.approx((200, 200), abs=0.01)
            alt = image.text["Description"]
        assert alt == (out / f"slides/{name}-2024-12.txt").read_text().strip()
        with Image.open(out / f"charts/{name}-2024-12.png") as image:
            assert image.info["dpi"] == pytest.approx((200, 200), abs=0.01)
            width_in = image.size[0] / 200
            assert width_in == pytest.approx(
                slides.BRIEF_SIZES_MM.get(name, (84, 52))[0] / 25.4, abs=0.01
            )
    assert "2025-02" in (out / "slides/density-h2-2024-12.txt").read_text()
    with (out / "slides/quantiles-2024-12.csv").open() as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) == 4 * 7
    first = data["horizons"][0]
    row = next(r for r in rows if r["period"] == first["period"] and r["quantile"] == "0.05")
    assert float(row["value"]) == first["quantiles"]["0.05"]


def test_png_bytes_are_reproducible(case: Case) -> None:
    import riskreport

    a = riskreport.assess(case.write())
    first = slides.pictures(a)[0].png
    assert slides.pictures(a)[0].png == first
    with Image.open(io.BytesIO(first)) as image:
        assert "Software" not in image.info


def test_the_slide_size_is_the_one_the_docs_state() -> None:
    # The documentation promised 2667 x 1500 pixels while the slides were 2666 wide.
    from tests.conftest import REPO

    docs = (REPO / "docs" / "outputs.md").read_text("utf-8")
    stated = re.search(r"slide size \([^)]*?(\d+) x (\d+)\s+pixels", docs)
    assert stated is not None
    assert (int(stated[1]), int(stated[2])) == slides.SLIDE_PIXELS == (2667, 1500)
