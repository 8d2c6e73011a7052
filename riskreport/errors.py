"""Errors and warnings of riskreport.

Bad input raises :class:`InputError`; the command line turns it into one line on stderr and
exit code 2. A file system that refuses a write raises :class:`EnvironmentFailure` (exit 3). Statistical caveats are warning classes, collected into the assessment's
``warnings`` and shown in the brief.
"""

from __future__ import annotations

import errno
from pathlib import Path


class InputError(ValueError):
    """Bad input or configuration: says which file, row and column, and what was expected.

    Parameters
    ----------
    message
        What was expected and what was found.
    file
        The file at fault (shown by name only).
    row
        1-based row as a spreadsheet shows it (the header is row 1), or None.
    column
        Column name, or a config key such as ``[target] tolerance``, or None.
    sheet
        The worksheet read, for a workbook (.xlsx), or None.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | Path | None = None,
        row: int | None = None,
        column: str | None = None,
        sheet: str | None = None,
    ) -> None:
        self.message = message
        self.file = Path(file).name if file is not None else None
        self.row = row
        self.column = column
        self.sheet = sheet
        super().__init__(self.one_line())

    def one_line(self) -> str:
        """The error as one line: ``file, [sheet 's',] row N, column 'c': message``."""
        where: list[str] = []
        if self.file is not None:
            where.append(self.file)
        if self.sheet is not None:
            where.append(f"sheet {self.sheet!r}")
        if self.row is not None:
            where.append(f"row {self.row}")
        if self.column is not None:
            where.append(
                f"column '{self.column}'" if not self.column.startswith("[") else self.column
            )
        text = " ".join(self.message.split())
        return f"{', '.join(where)}: {text}" if where else text


class OverwriteRefused(InputError):
    """An output for this as_of exists and differs; ``--force`` is needed to replace it."""


class LinkRefused(InputError):
    """A file or folder the output would be written through is a symbolic link."""


class FolderBusy(InputError):
    """Another run holds the output folder's lock longer than the configured wait."""


class EnvironmentFailure(RuntimeError):
    """The file system refused a read or write (read-only, full disk, no permission).

    Parameters
    ----------
    path
        The file or folder concerned.
    cause
        The ``OSError`` raised.
    """

    def __init__(self, path: Path, cause: OSError) -> None:
        self.path = path
        self.cause = cause
        super().__init__(self.one_line())

    def one_line(self) -> str:
        """The error as one line: the path, the system's reason and the errno name."""
        code = errno.errorcode.get(self.cause.errno or 0, "")
        reason = self.cause.strerror or str(self.cause)
        return f"cannot write {self.path}: {reason}" + (f" ({code})" if code else "")


class RiskReportWarning(UserWarning):
    """Base class of the caveats collected into an assessment."""


class SmallSampleWarning(RiskReportWarning):
    """A horizon has few past errors, so its probabilities (tails above all) are uncertain."""


class CombinationFallbackWarning(RiskReportWarning):
    """A combination method fell back to equal weights."""


class ModelLeftOutWarning(RiskReportWarning):
    """A model has no row in the current round and is left out of the combination."""


class BoundaryFitWarning(RiskReportWarning):
    """A fit's likelihood peaked at the edge of its parameter space, or a fit failed."""


class LaterOutcomeWarning(RiskReportWarning):
    """The actuals hold outcomes for as_of or later; they are not used in the round."""


class HeadlineBasisWarning(RiskReportWarning):
    """The headline cannot speak of the policy-horizon year on the configured basis."""


class CombinationRangeWarning(RiskReportWarning):
    """Estimated weights are negative, or the combined forecast leaves the models' range."""


class NameClashWarning(RiskReportWarning):
    """A model has the name of one of the track record's own forecasters, which is renamed."""


class UnusedColumnWarning(RiskReportWarning):
    """An input table has a column it does not use; it is named and ignored."""


class OutcomeGapWarning(RiskReportWarning):
    """The outcome series has no value for some periods between its first and last."""


class ForecastBiasWarning(RiskReportWarning):
    """With the centre on the point forecast, the past errors' mean is far from zero: more
    than a tenth of the target band's width and more than twice its standard error."""


class CentreCorrectionWarning(RiskReportWarning):
    """The error law's estimated centre moves the outcome's centre off the point forecast
    by more than a tenth of the target band's width."""
