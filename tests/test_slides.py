"""PNG charts and slides: size, resolution, alt text, and the tidy quantile CSV."""

from __future__ import annotations

import csv
import io
import json
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
            # 13.33 x 7.5 in at 200 dpi
            assert image.size == (round(13.33 * 200), round(7.5 * 200))
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
