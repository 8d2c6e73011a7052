"""From an assessment to the brief's context: every number already rounded and phrased.

Each section of the brief phrases its own numbers in :mod:`riskreport.report.sections`;
this module only gathers them into the one object the template prints.
"""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report.sections import (
    appendix,
    calibration,
    common,
    judgement,
    method,
    outlook,
    summary,
    track_record,
)
from riskreport.report.sections.common import ChartBlock, KeyValue, ProbabilityRow
from riskreport.report.sections.method import InputRow, SensitivityLine

__all__ = ["BriefContext", "ChartBlock", "build"]


@dataclass(frozen=True)
class BriefContext:
    """Everything the templates print."""

    title: str
    institution: str
    as_of: str
    language: str
    run_id: str
    headline: str
    messages: tuple[str, ...]
    summary_title: str
    basis_caption: str
    basis_rows: tuple[outlook.AnnualRow, ...]
    summary_rows: tuple[ProbabilityRow, ...]
    all_rows: tuple[ProbabilityRow, ...]
    path_rows: tuple[outlook.PathRow, ...]
    band_varies: bool
    summary_band: str
    annual_rows: tuple[outlook.AnnualRow, ...]
    annual_text: str
    change_text: str
    scenario_rows: tuple[judgement.ScenarioRow, ...]
    has_scenarios: bool
    scenario_periods: tuple[str, str]
    track_text: str
    cautions: tuple[str, ...]
    band_text: str
    scale_key: str
    labels: common.TableLabels
    summary_note: str
    appendix_note: str
    judgement_title: str
    accuracy_caption: str
    weight_caption: str
    charts: dict[str, ChartBlock]
    outlook_text: tuple[str, ...]
    overlay_entries: tuple[judgement.OverlayEntry, ...]
    overlay_rows: tuple[judgement.OverlayRow, ...]
    overlay_text: str
    accuracy_horizons: tuple[str, ...]
    accuracy_lines: tuple[track_record.AccuracyLine, ...]
    accuracy_text: str
    calibration_text: tuple[str, ...]
    pit_rows: tuple[appendix.PitRow, ...]
    pit_bins: tuple[str, ...]
    reliability_rows: tuple[appendix.ReliabilityRow, ...]
    coverage_rows: tuple[calibration.CoverageRow, ...]
    tests_text: tuple[str, ...]
    weight_horizons: tuple[str, ...]
    weight_rows: tuple[track_record.AccuracyLine, ...]
    weight_text: str
    models: tuple[KeyValue, ...]
    method: tuple[KeyValue, ...]
    inputs: tuple[InputRow, ...]
    samples: tuple[KeyValue, ...]
    warnings: tuple[str, ...]
    software: str
    adjustment_text: tuple[str, ...] = ()
    sensitivity_rows: tuple[SensitivityLine, ...] = ()
    sensitivity_caption: str = ""
    threshold_line: str = ""
    threshold_rows: tuple[appendix.ThresholdRow, ...] = ()
    threshold_text: str = appendix.THRESHOLD_TEXT
    density_charts: tuple[str, ...] = ()
    round_rows: tuple[outlook.RoundRow, ...] = ()
    round_text: str = ""


def build(a: Assessment, charts: dict[str, ChartBlock], run_id: str) -> BriefContext:
    """Phrase every number of the assessment for the templates."""
    headline, _ = summary.headline(a)
    shown = common.summary_horizons(a)
    entries, overlay_rows, overlay_text = judgement.overlay(a)
    acc_h, acc_lines, acc_text = track_record.accuracy(a)
    weight_h, weight_rows, weight_text = track_record.weights(a, shown)
    calibration_lines, coverage_rows = calibration.calibration(a, shown)
    first, second = judgement.scenario_horizons(a)
    return BriefContext(
        title=a.title,
        institution=a.institution,
        as_of=a.as_of,
        language="en",
        run_id=run_id,
        headline=headline,
        messages=summary.messages(a),
        summary_title=summary.BASIS_TITLES[a.headline.basis],
        basis_caption=summary.BASIS_CAPTIONS[a.headline.basis],
        basis_rows=summary.basis_rows(a),
        summary_rows=tuple(
            common.probability_row(a.horizon_result(h), a.policy_horizon) for h in shown
        ),
        all_rows=appendix.all_rows(a),
        annual_rows=outlook.annual_rows(a),
        annual_text=outlook.annual_text(a),
        path_rows=outlook.path_rows(a),
        band_varies=len({r.band for r in a.horizons}) > 1,
        summary_band=common.band_label(a.horizons[0].band),
        change_text=summary.change_text(a),
        scenario_rows=judgement.scenario_rows(a),
        has_scenarios=bool(a.scenarios),
        scenario_periods=(a.horizon_result(first).period, a.horizon_result(second).period),
        track_text=summary.track_text(a),
        cautions=summary.CAUTIONS,
        band_text=common.BAND_TEXT,
        scale_key=summary.scale_key(a),
        labels=common.table_labels(a),
        summary_note=(
            f"Centre: the most likely value, {summary.centre_label(a)}; the models' own "
            f"forecast is in the appendix. {common.INTERVAL_TEXT} {common.SHORT_BAND_TEXT}"
        ),
        appendix_note=(
            "Models' forecast: the combined forecast of the models. "
            f"Centre: the most likely value, {summary.centre_label(a)}. {common.INTERVAL_TEXT}"
        ),
        judgement_title=judgement.title(a),
        accuracy_caption=track_record.accuracy_caption(a),
        weight_caption=track_record.WEIGHTS_TABLE_CAPTION,
        charts=charts,
        outlook_text=outlook.outlook_text(a),
        overlay_entries=entries,
        overlay_rows=overlay_rows,
        overlay_text=overlay_text,
        accuracy_horizons=acc_h,
        accuracy_lines=acc_lines,
        accuracy_text=acc_text,
        tests_text=track_record.tests_text(a, shown),
        calibration_text=calibration_lines,
        pit_rows=appendix.pit_rows(a),
        pit_bins=appendix.PIT_BINS,
        reliability_rows=appendix.reliability_rows(a),
        coverage_rows=coverage_rows,
        weight_horizons=weight_h,
        weight_rows=weight_rows,
        weight_text=weight_text,
        models=method.model_facts(a),
        method=method.method_facts(a),
        inputs=method.input_rows(a),
        samples=method.sample_facts(a),
        warnings=a.warnings,
        software=", ".join(f"{k} {v}" for k, v in a.software.items()),
        adjustment_text=method.adjustment_text(a),
        sensitivity_rows=method.sensitivity_lines(a),
        sensitivity_caption=method.sensitivity_caption(a),
        threshold_line=summary.threshold_line(a),
        threshold_rows=appendix.threshold_rows(a, shown),
        density_charts=tuple(name for name in charts if name.startswith("density-")),
        round_rows=outlook.round_rows(a) if outlook.rounds_shown(a) else (),
        round_text=outlook.round_text(a) if outlook.rounds_shown(a) else "",
    )
