"""The board brief and the staff annex: the brief stays within four pages (monthly demo and a
quarterly round), page 1 states the JSON's policy-horizon probability, the annex names every
period and every model, both PDFs rebuild byte for byte, and a killed build leaves one whole
round with both documents of the same round."""

from __future__ import annotations

import hashlib
import json
import os
import re
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
from pypdf import PdfReader

import riskreport
from riskreport.files import folder
from tests import quarterly_world as qw
from tests.conftest import Case, Result

REPO = Path(__file__).resolve().parents[1]
DEMO_AS_OF = "2026-11"
# The board reads the brief in five minutes: at most four A4 pages (the product's own rule,
# riskreport documentation, "The brief (PDF) and the annex").
MAX_BRIEF_PAGES = 4


def _text(path: Path) -> list[str]:
    return [" ".join(page.extract_text().split()) for page in PdfReader(path).pages]


def test_demo_brief_has_at_most_four_pages_and_the_annex_the_rest(demo_build: Path) -> None:
    out = demo_build / "out"
    brief = _text(out / f"brief-{DEMO_AS_OF}.pdf")
    annex = _text(out / f"annex-{DEMO_AS_OF}.pdf")
    assert 1 <= len(brief) <= MAX_BRIEF_PAGES
    assert "How sure can we be?" in brief[-1]
    assert "Cautions in full" in brief[-1]
    # Staff material lives in the annex only.
    for heading in ("Track record", "Method and data", "Thresholds beyond the band"):
        assert any(heading in page for page in annex), heading
    assert not any("Method and data" in page for page in brief)
    html = (out / f"brief-{DEMO_AS_OF}.html").read_text("utf-8")
    for heading in ("How sure can we be?", "Staff annex", "Method and data", "The fan"):
        assert heading in html, heading  # the HTML page holds both documents


def test_demo_annex_names_every_period_and_every_model(demo_build: Path) -> None:
    out = demo_build / "out"
    data = json.loads((out / f"assessment-{DEMO_AS_OF}.json").read_text("utf-8"))
    text = " ".join(_text(out / f"annex-{DEMO_AS_OF}.pdf"))
    for row in data["horizons"]:
        assert row["period"] in text, row["period"]
    for model in {r["model"] for r in data["accuracy"]}:
        assert model in text, model
    # A model no longer in the round is marked in the table itself.
    dropped = [m["model"] for m in data["models"] if not m["in_current_round"]]
    assert dropped  # the demo has one, so this check can fail
    for model in dropped:
        assert f"{model} (dropped; not comparable)" in text


@pytest.fixture(scope="module")
def quarterly(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A quarterly round (h 0-7, policy horizon 4) built with its PDFs and JSON."""
    folder_ = tmp_path_factory.mktemp("quarterly")
    qw.write(folder_, simulations=2000)
    config = folder_ / "config.toml"
    config.write_text(config.read_text().replace('formats = ["json"]', 'formats = ["pdf", "json"]'))
    assert riskreport.cli.main(["build", str(config), "--out", str(folder_ / "o"), "-q"]) == 0
    return folder_ / "o"


def test_quarterly_brief_fits_and_shows_more_than_three_horizons(quarterly: Path) -> None:
    brief = _text(next(quarterly.glob("brief-*.pdf")))
    assert len(brief) <= MAX_BRIEF_PAGES
    data = json.loads(next(quarterly.glob("assessment-*.json")).read_text("utf-8"))
    # The rows of page 1's table: the periods printed there (a quarterly brief used to show
    # three rows only).
    shown = [r["period"] for r in data["horizons"] if re.search(rf"\b{r['period']}\b", brief[0])]
    assert len(shown) > 3, shown
    annex = " ".join(_text(next(quarterly.glob("annex-*.pdf"))))
    for row in data["horizons"]:
        assert row["period"] in annex, row["period"]
    for model in ("a", "b"):
        assert re.search(rf"\b{model}\b", annex)


def test_quarterly_page_one_states_the_policy_probability(quarterly: Path) -> None:
    data = json.loads(next(quarterly.glob("assessment-*.json")).read_text("utf-8"))
    policy = next(r for r in data["horizons"] if r["h"] == data["policy_horizon"])
    first = _text(next(quarterly.glob("brief-*.pdf")))[0]
    found = re.search(r"target band: (\d+)% inside", first)
    assert found is not None, first[:400]
    assert abs(int(found.group(1)) - 100 * policy["p_inside"]) < 1.0


def _digests(out: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(out.glob("*.pdf"))}


def test_both_pdfs_rebuild_byte_for_byte(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    case.config = case.config.replace('formats = ["json", "csv"]', 'formats = ["pdf"]')
    config = case.write()
    for name in ("one", "two"):
        assert run("build", config, "--out", tmp_path / name, "-q").code == 0
    first, second = _digests(tmp_path / "one"), _digests(tmp_path / "two")
    assert set(first) == {"brief-2024-12.pdf", "annex-2024-12.pdf"}
    assert first == second
    assert first["brief-2024-12.pdf"] != first["annex-2024-12.pdf"]


def test_a_killed_build_leaves_brief_and_annex_of_one_round(
    case: Case, tmp_path: Path, run: Callable[..., Result]
) -> None:
    case.config = case.config.replace('formats = ["json", "csv"]', 'formats = ["pdf", "json"]')
    config = case.write()
    out = case.folder / "out"
    assert run("build", config, "--out", out, "-q").code == 0
    before = _digests(out)
    case.config = case.config.replace("tolerance = 1.0", "tolerance = 1.3")
    case.write()
    process = subprocess.run(
        [sys.executable, "-m", "riskreport", "build", str(config), "--out", str(out), "--force"],
        env={**os.environ, "MPLBACKEND": "Agg", folder.CRASH_VARIABLE: "switching"},
        cwd=REPO,
        capture_output=True,
        check=False,
        timeout=300,
    )
    assert process.returncode == 70, process.stderr  # ended by the hook, as a kill would
    # The next run completes the committed round: both documents are the new round's.
    assert run("build", config, "--out", out, "-q").code == 0
    after = _digests(out)
    assert set(after) == set(before) == {"brief-2024-12.pdf", "annex-2024-12.pdf"}
    assert after["brief-2024-12.pdf"] != before["brief-2024-12.pdf"]
    assert after["annex-2024-12.pdf"] != before["annex-2024-12.pdf"]
    assert folder.verified(out, "2024-12") is not None
