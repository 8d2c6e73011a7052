"""What the headline speaks of: the policy-horizon period on the ``period`` basis, else the
calendar year of the policy horizon on the configured annual basis (``[target] basis``)."""

from __future__ import annotations

import warnings

from riskreport.assessment import BasisResult, HorizonResult
from riskreport.errors import HeadlineBasisWarning
from riskreport.laws import annual as annual_module
from riskreport.reading import periods
from riskreport.reading.config import Config

BASIS_WORDS = {"calendar-year-average": "average", "year-end": "year end"}


def basis_results(
    cfg: Config, yearly: tuple[annual_module.AnnualResult, ...]
) -> tuple[BasisResult, ...]:
    """The calendar years in view on the configured basis (empty on the ``period`` basis)."""
    if cfg.target.basis == "period":
        return ()
    per_year = periods.PERIODS_PER_YEAR[cfg.brief.frequency]
    rows = []
    for r in yearly:
        if r.basis != cfg.target.basis:
            continue
        last = _year_start(r.year, cfg) + per_year - 1
        rows.append(
            BasisResult(
                basis=r.basis,
                label=f"{r.year} {BASIS_WORDS[r.basis]}",
                period=periods.label(last, cfg.brief.frequency),
                year=r.year,
                band=r.band,
                p_below=r.p_below,
                p_inside=r.p_inside,
                p_above=r.p_above,
                p_inside_interval=None,
                observed_periods=r.observed_periods,
                simulated_periods=r.simulated_periods,
            )
        )
    return tuple(rows)


def _year_start(year: int, cfg: Config) -> int:
    start = periods.parse(f"{year}-01" if cfg.brief.frequency == "monthly" else f"{year}-Q1")
    assert start is not None
    return start.ordinal


def _period_headline(row: HorizonResult) -> BasisResult:
    return BasisResult(
        basis="period",
        label=row.period,
        period=row.period,
        year=None,
        band=row.band,
        p_below=row.p_below,
        p_inside=row.p_inside,
        p_above=row.p_above,
        p_inside_interval=row.p_inside_interval,
        observed_periods=0,
        simulated_periods=1,
    )


def headline(cfg: Config, policy: HorizonResult, years: tuple[BasisResult, ...]) -> BasisResult:
    """The measure the headline speaks of: the policy-horizon period on the ``period`` basis,
    else the calendar year of the policy horizon on the configured basis.

    When that year is not wholly observed or reported, the latest earlier year that is
    stands in, with a warning; with no such year, the policy-horizon period does.
    """
    if cfg.target.basis == "period":
        return _period_headline(policy)
    year = periods.year_of(cfg.brief.as_of + cfg.brief.policy_horizon, cfg.brief.frequency)
    for row in years:
        if row.year == year:
            return row
    earlier = [row for row in years if row.year is not None and row.year < year]
    word = BASIS_WORDS[cfg.target.basis]
    if earlier:
        chosen = earlier[-1]
        warnings.warn(
            f"The target is on a calendar-year basis ({cfg.target.basis}), but the reported horizons "
            f"do not reach the end of {year}, the year of the policy horizon; the headline "
            f"speaks of the {chosen.year} {word} instead.",
            HeadlineBasisWarning,
            stacklevel=3,
        )
        return chosen
    warnings.warn(
        f"The target is on a calendar-year basis ({cfg.target.basis}), but no calendar year is wholly "
        "observed or reported; the headline speaks of the policy-horizon period instead.",
        HeadlineBasisWarning,
        stacklevel=3,
    )
    return _period_headline(policy)
