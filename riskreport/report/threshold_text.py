"""Wording for ``[target] thresholds``: the page-1 line and the appendix rows."""

from __future__ import annotations

from dataclasses import dataclass

from riskreport.assessment import Assessment
from riskreport.report import formatting as fmt
from riskreport.thresholds import ThresholdResult


@dataclass(frozen=True)
class ThresholdRow:
    """One appendix row: a threshold in one period, every number as printed."""

    threshold: str
    period: str
    h: str
    below: str
    above: str
    below_once: str
    above_once: str
    is_policy: bool


def threshold_label(value: float) -> str:
    """A threshold as printed: "0%", "5.5%", "-1%" (with a typographic minus)."""
    digits = 0 if float(value).is_integer() else 1
    return f"{fmt.number(value, digits)}%"


def _side(a: Assessment, t: ThresholdResult) -> str:
    """The side of a threshold a board asks about: below a low line, above a high one."""
    lower, upper = a.policy.band
    return "below" if t.threshold < (lower + upper) / 2 else "above"


def page_one_line(a: Assessment) -> str:
    """One sentence for page 1 (empty when no threshold is set)."""
    if not a.thresholds:
        return ""
    policy = a.policy
    parts = []
    for t in a.thresholds:
        at = next(r for r in t.horizons if r.h == a.policy_horizon)
        path = next(r for r in t.path if r.h == a.policy_horizon)
        if _side(a, t) == "below":
            parts.append(
                f"below {threshold_label(t.threshold)} {fmt.single_percent(at.p_below)} "
                f"(at least once by then {fmt.single_percent(path.p_below_at_least_once)})"
            )
        else:
            parts.append(
                f"above {threshold_label(t.threshold)} {fmt.single_percent(at.p_above)} "
                f"(at least once by then {fmt.single_percent(path.p_above_at_least_once)})"
            )
    return (
        f"Beyond the band, in {policy.period}: inflation " + "; ".join(parts) + ". "
        f"\u201cAt least once\u201d counts every period from {a.horizons[0].period}."
    )


def appendix_rows(a: Assessment, shown: tuple[int, ...]) -> tuple[ThresholdRow, ...]:
    """Rows of the appendix table: each threshold at the brief's summary horizons."""
    rows = []
    for t in a.thresholds:
        for at, path in zip(t.horizons, t.path, strict=True):
            if at.h not in shown:
                continue
            rows.append(
                ThresholdRow(
                    threshold=threshold_label(t.threshold),
                    period=at.period,
                    h=str(at.h),
                    below=fmt.single_percent(at.p_below),
                    above=fmt.single_percent(at.p_above),
                    below_once=fmt.single_percent(path.p_below_at_least_once),
                    above_once=fmt.single_percent(path.p_above_at_least_once),
                    is_policy=at.h == a.policy_horizon,
                )
            )
    return tuple(rows)


APPENDIX_TEXT = (
    "Below means strictly below the line and above strictly above it (the line itself has "
    "no probability of its own). \u201cAt least once\u201d is counted on the same simulated "
    "paths as the band\u2019s path probabilities, from the first reported period up to the "
    "one shown."
)
