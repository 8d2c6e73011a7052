"""The demo scenario end to end: files, JSON contract, PDF text, reproducibility, safety."""

from __future__ import annotations

import hashlib
import json
import re
import shutil
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from pypdf import PdfReader

from tests.conftest import DEMO, Case, Result, make_case

AS_OF = "2026-11"
HORIZON_KEYS = {
    "period",
    "h",
    "band",
    "centre",
    "p_below",
    "p_inside",
    "p_above",
    "p_inside_interval",
    "quantiles",
    "distribution",
    "n_errors",
}


def _out(demo_build: Path) -> Path:
    return demo_build / "out"


def _pdf_text(path: Path) -> str:
    return "\n".join(page.extract_text() for page in PdfReader(path).pages)


def test_all_outputs_exist(demo_build: Path) -> None:
    out = _out(demo_build)
    for name in (
        f"brief-{AS_OF}.pdf",
        f"annex-{AS_OF}.pdf",
        f"brief-{AS_OF}.html",
        f"assessment-{AS_OF}.json",
        f"tables/horizons-{AS_OF}.csv",
        f"charts/outlook-{AS_OF}.svg",
        f"tables/thresholds-{AS_OF}.csv",
        f"workbook-{AS_OF}.xlsx",
        f"charts/density-h18-{AS_OF}.png",
        f"slides/outlook-{AS_OF}.png",
        f"slides/outlook-{AS_OF}.txt",
        f"slides/quantiles-{AS_OF}.csv",
        "runs.jsonl",
    ):
        assert (out / name).is_file(), name
    assert not [p for p in out.iterdir() if p.name.startswith(".riskreport-")]


def test_json_contract_keys(demo_build: Path) -> None:
    data = json.loads((_out(demo_build) / f"assessment-{AS_OF}.json").read_text("utf-8"))
    for key in (
        "as_of",
        "frequency",
        "title",
        "institution",
        "target",
        "horizons",
        "model_based_horizons",
        "judgement",
        "path",
        "combination",
        "accuracy",
        "change",
        "inputs",
        "software",
        "warnings",
    ):
        assert key in data, key
    assert data["as_of"] == AS_OF
    assert len(data["horizons"]) == 25
    for row in data["horizons"]:
        assert HORIZON_KEYS <= set(row)
        assert set(row["quantiles"]) == {"0.05", "0.1", "0.25", "0.5", "0.75", "0.9", "0.95"}
    assert data["horizons"] != data["model_based_horizons"]  # the demo has a judgement
    assert {"period", "h", "p_inside_throughout", "p_back_inside_by"} <= set(data["path"][0])
    assert {"model", "h", "n", "mae", "rmse", "mean_error"} <= set(data["accuracy"][0])
    assert data["combination"]["method"] == "equal"
    assert data["change"] is None
    # [target] thresholds = [0.0, 5.0] in the demo config
    assert [t["threshold"] for t in data["thresholds"]] == [0.0, 5.0]
    assert len(data["thresholds"][0]["horizons"]) == len(data["thresholds"][0]["path"]) == 25
    assert [d["h"] for d in data["density"]] == [6, 18]  # [brief] density_horizons
    assert data["round_history"][-1]["current"] is True


def test_pdf_carries_the_headline_numbers_from_the_json(demo_build: Path) -> None:
    out = _out(demo_build)
    data = json.loads((out / f"assessment-{AS_OF}.json").read_text("utf-8"))
    policy = next(r for r in data["horizons"] if r["h"] == data["policy_horizon"])
    # Page 1 itself states it (the board reads the first page first).
    text = " ".join(PdfReader(out / f"brief-{AS_OF}.pdf").pages[0].extract_text().split())
    sentence = re.search(
        r"At the policy horizon \((\S+), (\d+) months ahead\) inflation is .*? to be inside "
        r"the \S+ target band: (\d+)% inside, (\d+)% outside "
        r"\((\d+)% (above|below), (\d+)% (above|below)\)",
        text,
    )
    assert sentence is not None, text[:600]
    assert sentence.group(1) == policy["period"]
    inside, outside = int(sentence.group(3)), int(sentence.group(4))
    sides = {sentence.group(6): int(sentence.group(5)), sentence.group(8): int(sentence.group(7))}
    above, below = sides["above"], sides["below"]
    assert inside + above + below == 100
    assert outside == above + below
    for printed, p in (
        (inside, policy["p_inside"]),
        (above, policy["p_above"]),
        (below, policy["p_below"]),
    ):
        assert abs(printed - 100 * p) < 1.0


@pytest.mark.parametrize("document", ["brief", "annex"])
def test_pdf_has_cautions_and_page_numbers(demo_build: Path, document: str) -> None:
    reader = PdfReader(_out(demo_build) / f"{document}-{AS_OF}.pdf")
    text = " ".join(_pdf_text(_out(demo_build) / f"{document}-{AS_OF}.pdf").split())
    for phrase in (
        "model estimates built from the errors of past forecasts",
        "Future errors may differ",
        "small sample",
        "does not replace, the judgement of the policy committee",
        "IPCC AR5",
        "band edges count as inside" if document == "brief" else "both edges count as inside",
        "Monetary Authority of Corvania",  # the running header
    ):
        assert phrase in text, phrase
    pages = len(reader.pages)
    assert f"Page 1 of {pages}" in text
    assert f"Page {pages} of {pages}" in text
    title = "Inflation outlook and the target band"
    if document == "annex":
        title += ": staff annex"
    assert reader.metadata.title == f"{title} ({AS_OF})"
    assert reader.trailer["/Root"]["/Lang"] == "en"
    assert "/StructTreeRoot" in reader.trailer["/Root"]  # tagged PDF
    # The run id is staff matter: in the annex's footer, not on the board's pages.
    assert (re.search(r"Run [0-9a-f]{12}\.", text) is not None) == (document == "annex")


def test_html_is_self_contained(demo_build: Path) -> None:
    html = (_out(demo_build) / f"brief-{AS_OF}.html").read_text("utf-8")
    sources = re.findall(r'src="([^"]*)"', html)
    assert sources
    assert all(s.startswith("data:image/svg+xml;base64,") for s in sources)
    assert "http://" not in html
    assert "https://" not in html
    assert all(alt.strip() for alt in re.findall(r'alt="([^"]*)"', html))


def test_rebuild_is_byte_identical(
    demo_build: Path, tmp_path: Path, run: Callable[..., Result]
) -> None:
    result = run("build", demo_build / "inputs" / "config.toml", "--out", tmp_path, "-q")
    assert result.code == 0, result.stderr
    first = _out(demo_build)
    for path in tmp_path.rglob("*"):
        if path.is_file() and path.name != "runs.jsonl":
            twin = first / path.relative_to(tmp_path)
            assert (
                hashlib.sha256(path.read_bytes()).digest()
                == hashlib.sha256(twin.read_bytes()).digest()
            ), path.name


def test_demo_command_and_json_summary(
    tmp_path: Path, run: Callable[..., Result], monkeypatch: pytest.MonkeyPatch
) -> None:
    from riskreport import cli

    # The command reads the packaged demo config ...
    assert cli.demo_config().read_bytes() == (DEMO / "config.toml").read_bytes()
    # ... whose full build the session fixture already checks; here the command's own work
    # (two rounds, the JSON summary) runs on the demo inputs with a lighter uncertainty
    # section and only the PDF and JSON (the periods and the policy horizon are the demo's).
    inputs = tmp_path / "inputs"
    shutil.copytree(DEMO, inputs, ignore=shutil.ignore_patterns("__pycache__", "*.py"))
    config = (inputs / "config.toml").read_text("utf-8")
    light = {
        "[[judgement]]\n": "[uncertainty]\nbootstrap_replicates = 50\nsimulations = 1000\n\n"
        "[[judgement]]\n",
        'formats = ["pdf", "html", "json", "csv", "xlsx", "png", "slides"]': (
            'formats = ["pdf", "json"]'
        ),
    }
    for old, new in light.items():
        assert old in config
        config = config.replace(old, new, 1)
    (inputs / "config.toml").write_text(config, "utf-8")
    monkeypatch.setattr(cli, "demo_config", lambda: inputs / "config.toml")
    result = run("demo", "--out", tmp_path / "out", "--json")
    assert result.code == 0, result.stderr
    summary = json.loads(result.stdout)
    assert summary["status"] == "ok"
    assert summary["headline"]["h"] == 18
    assert all(len(o["sha256"]) == 64 for o in summary["outputs"])
    assert any(o["path"].endswith(f"brief-{AS_OF}.pdf") for o in summary["outputs"])


def test_demo_inputs_are_what_the_generator_makes(tmp_path: Path) -> None:
    # The committed demo files are reproducible from the seeded script.
    import importlib.util

    spec = importlib.util.spec_from_file_location("generate", DEMO / "generate.py")
    assert spec is not None
    assert spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    module.HERE = tmp_path
    module.main()
    for name in ("forecasts.csv", "actuals.csv"):
        assert (tmp_path / name).read_bytes() == (DEMO / name).read_bytes(), name


HOSTILE_FIELDS = ("title", "institution", "reason", "scenario", "model")


def _hostile(marker: int) -> str:
    return f"<script>alert({marker})</script> & <img src=file:///etc/passwd>"


def _escaped(marker: int) -> str:
    return f"&lt;script&gt;alert({marker})&lt;/script&gt; &amp; &lt;img src=file:///etc/passwd&gt;"


@pytest.fixture(scope="module")
def hostile_brief(tmp_path_factory: pytest.TempPathFactory) -> tuple[str, str]:
    """One HTML + PDF build of the small case with hostile text in every free-text field at
    once, each field with its own marker (alert(1) for the title, alert(2) for the
    institution, ... in the order of HOSTILE_FIELDS). Returns the HTML and the PDF text."""
    from riskreport import cli

    case = make_case(tmp_path_factory.mktemp("hostile"))
    text = {field: _hostile(i) for i, field in enumerate(HOSTILE_FIELDS, 1)}
    toml = {field: t.replace("\\", "\\\\") for field, t in text.items()}
    case.config += f'\n[[judgement]]\nfrom = "2025-01"\nto = "2025-01"\nshift = 0.1\nreason = \'{toml["reason"]}\'\n'
    case.config += f"\n[[scenario]]\nname = '{toml['scenario']}'\nfrom = \"2025-01\"\nto = \"2025-01\"\nshift = 0.1\nreason = '{toml['scenario']}'\n"
    for row in case.forecasts[1:]:
        if row[2] == "a":
            row[2] = text["model"].replace(",", ";")
    for field in ("title", "institution"):
        case.config = re.sub(
            rf'{field} = "[^"]*"', f"{field} = '{toml[field]}'", case.config, count=1
        )
    case.config = case.config.replace('formats = ["json", "csv"]', 'formats = ["html", "pdf"]')
    out = case.folder / "o"
    assert cli.main(["build", str(case.write()), "--out", str(out), "-q"]) == 0
    html = (out / "brief-2024-12.html").read_text("utf-8")
    pdfs = (_pdf_text(out / f"{name}-2024-12.pdf") for name in ("brief", "annex"))
    return html, " ".join(" ".join(pdfs).split())


@pytest.mark.parametrize("field", HOSTILE_FIELDS)
def test_hostile_text_is_escaped(hostile_brief: tuple[str, str], field: str) -> None:
    # Every free-text field must come out escaped: jinja2 does not autoescape unless told to
    # (jinja2 API documentation, Autoescaping). All fields share one build; each field's
    # own marker shows that its text reached the brief, escaped.
    html, pdf_text = hostile_brief
    marker = HOSTILE_FIELDS.index(field) + 1
    assert "<script>" not in html
    assert "<img src=file" not in html
    assert _escaped(marker) in html
    assert f"<script>alert({marker})</script>" in pdf_text  # shown as text, not run


def test_pdf_renderer_refuses_outside_resources() -> None:
    # Only inline data: URLs; a file:// or http:// reference stops the render instead of
    # being fetched (WeasyPrint documentation, First steps, Security: by default it reads
    # file:// and HTTP URLs).
    import datetime as dt

    from weasyprint.urls import FatalURLFetchingError

    from riskreport.report import render

    for url in ("file:///etc/passwd", "http://127.0.0.1:9/x.png"):
        page = f'<html lang="en"><head><title>t</title></head><body><img src="{url}" alt="x"></body></html>'
        with pytest.raises(FatalURLFetchingError):
            render.pdf(page, dt.date(2026, 1, 1))


def _scrub(html: str) -> str:
    """Volatile fields out: software versions, the run id derived from them, chart bytes."""
    html = re.sub(
        r"data:image/svg\+xml;base64,[A-Za-z0-9+/=]+", "data:image/svg+xml;base64,CHART", html
    )
    html = re.sub(r"Run [0-9a-f]{12}", "Run RUNID", html)
    html = re.sub(r"Software: [^<]*\.", "Software: VERSIONS.", html)
    return re.sub(r"<style>.*?</style>", "<style>CSS</style>", html, flags=re.S)


def test_golden_html(case: Case, run: Callable[..., Result]) -> None:
    """The brief's HTML for a fixed small case, against a reviewed copy (volatile fields
    scrubbed). Set RISKREPORT_UPDATE_GOLDEN=1 to rewrite it after a deliberate change."""
    import os

    case.config = case.config.replace('formats = ["json", "csv"]', 'formats = ["html"]')
    assert run("build", case.write(), "--out", case.folder / "o", "-q").code == 0
    html = _scrub((case.folder / "o" / "brief-2024-12.html").read_text("utf-8"))
    golden = Path(__file__).parent / "golden" / "brief-small.html"
    if os.environ.get("RISKREPORT_UPDATE_GOLDEN"):
        golden.parent.mkdir(exist_ok=True)
        golden.write_text(html, encoding="utf-8")
    assert html == golden.read_text(encoding="utf-8")


def test_summary_fits_on_the_first_page(demo_build: Path) -> None:
    reader = PdfReader(_out(demo_build) / f"brief-{AS_OF}.pdf")
    first = " ".join(reader.pages[0].extract_text().split())
    assert "At the policy horizon" in first
    assert "Below, inside and above the band" in first
    assert "Since the last brief" in first
    assert "does not replace, the judgement of the policy committee" in first  # cautions box
    assert "Outlook The shaded areas" not in first
    assert "Outlook The shaded areas" in " ".join(reader.pages[1].extract_text().split())


def test_track_record_sentence_gets_the_sign_of_the_bias_right(demo_build: Path) -> None:
    # Errors are actual - forecast: a positive mean error means outcomes came in above.
    out = _out(demo_build)
    data = json.loads((out / f"assessment-{AS_OF}.json").read_text("utf-8"))
    row = next(
        r
        for r in data["accuracy"]
        if r["model"] == "combination" and r["h"] == data["policy_horizon"]
    )
    text = " ".join(_pdf_text(out / f"brief-{AS_OF}.pdf").split())
    expected = "above" if row["mean_error"] > 0 else "below"
    assert re.search(rf"with outcomes [0-9.]+ pp {expected} it on average", text)


def test_judgement_message_names_its_largest_effect(demo_build: Path) -> None:
    data = json.loads((_out(demo_build) / f"assessment-{AS_OF}.json").read_text("utf-8"))
    moves = [
        abs(f["p_inside"] - b["p_inside"])
        for f, b in zip(data["horizons"], data["model_based_horizons"], strict=True)
    ]
    biggest = data["horizons"][int(np.argmax(moves))]["period"]
    text = " ".join(_pdf_text(_out(demo_build) / f"brief-{AS_OF}.pdf").split())
    assert f"moves the probability of being inside most in {biggest}" in text
    assert "It does not cover the policy horizon." in text  # the demo's judgement ends 2027-12


def _whole(p: float) -> int:
    return int(np.floor(100 * p + 0.5))  # round half up, as printed


def test_how_sure_page_quotes_the_reliability_bin_nearest_the_headline(demo_build: Path) -> None:
    # The brief's "how sure" page (its last) must speak of statements like today's: the bin
    # of the reliability table (JSON) whose stated probability is nearest the headline
    # P(inside), with its uncertainty in words; page 1 leaves the bin to it.
    out = _out(demo_build)
    data = json.loads((out / f"assessment-{AS_OF}.json").read_text("utf-8"))
    bins = data["calibration"]["brier"]["reliability"]
    today = data["headline"]["p_inside"]
    nearest = min(bins, key=lambda r: abs(r["forecast_mean"] - today))
    near_70 = min(bins, key=lambda r: abs(r["forecast_mean"] - 0.7))
    assert nearest is not near_70  # the demo tells the two apart, so this test can fail
    pages = PdfReader(out / f"brief-{AS_OF}.pdf").pages
    first = " ".join(pages[0].extract_text().split())
    assert "statements of" not in first
    assert " came true " not in first
    last = " ".join(pages[-1].extract_text().split())
    said, happened = _whole(nearest["forecast_mean"]), _whole(nearest["observed_frequency"])
    lo, hi = (_whole(edge) for edge in nearest["bin"])
    edges = f"{lo}% or more" if hi >= 100 else f"under {hi}%" if lo <= 0 else f"{lo}% to {hi}%"
    # The bin is pooled over all horizons: the sentence gives its edges, today's value, its
    # count and mean (it used to present the bin's mean as today's value, and the count of
    # one horizon as the bin's).
    assert (
        f"past rounds said {edges} inside {nearest['n']} times (all horizons together), and "
        f"inflation ended inside {happened}% of the time"
    ) in last
    assert "rough guide only" in last  # overlapping statements: few independent checks
    # Direction in plain words, and the 90% range at the policy horizon.
    sentence = last[last.index(f"said {edges} inside") :]
    if happened > said + 5:
        assert "more often than stated" in sentence or "times as often as stated" in sentence
    elif happened < said - 5:
        assert "less often than stated" in sentence
    else:
        assert "about as often as stated" in sentence
    cover = next(
        c
        for c in data["calibration"]["coverage"]
        if c["h"] == data["policy_horizon"] and c["nominal"] == 0.9
    )
    held = (
        f"the 90% ranges of past rounds held {_whole(cover['observed'])}% of {cover['n']} outcomes"
    )
    assert held in first
    assert held in last


def test_no_verbal_phrase_contradicts_its_number(demo_build: Path) -> None:
    # Every "word (NN%)" and "word to be inside ...: NN% inside" the brief prints must say
    # the side of 50% its number is on (IPCC AR5 terms, Mastrandrea et al. 2010, Table 1).
    from riskreport.report import verbal

    html = (_out(demo_build) / f"brief-{AS_OF}.html").read_text("utf-8")
    text = " ".join(re.sub(r"<[^>]+>", " ", html).split())
    words = sorted(
        {t.word for s in verbal.SCALES.values() for t in s.terms}
        | {verbal.MORE_LIKELY, verbal.LESS_LIKELY},
        key=len,
        reverse=True,
    )
    pattern = "|".join(re.escape(w) for w in words)
    found = re.findall(rf"\b({pattern}) \(([<>]?)(\d+)%\)", text)
    found += re.findall(rf"\b({pattern}) to be inside [^:]*: ([<>]?)(\d+)% inside", text)
    assert len(found) >= 2  # the headline's word and the near-term sentence at least
    scale = verbal.SCALES["ipcc-ar5"]
    for word, _, number in found:
        p = int(number)
        assert verbal.side(word, scale) == (0 if p == 50 else 1 if p > 50 else -1), (word, p)
