"""Typed values that flow through the auditor: spans, findings, measurements, reports."""
from __future__ import annotations

import enum
from dataclasses import dataclass, field, replace
from typing import Any


class Severity(str, enum.Enum):
    """How strongly a finding asks for attention; ordered error > warning > note."""

    ERROR = "error"
    WARNING = "warning"
    NOTE = "note"

    @property
    def rank(self) -> int:
        """2 for error, 1 for warning, 0 for note (higher is more severe)."""
        return {"error": 2, "warning": 1, "note": 0}[self.value]

    def __str__(self) -> str:
        return self.value


class Verdict(str, enum.Enum):
    """What the dynamic pass concluded about one finding."""

    UNSTABLE = "unstable"
    ILL_CONDITIONED = "ill-conditioned"
    BENIGN = "benign"
    NOT_MEASURED = "not-measured"

    def __str__(self) -> str:
        return self.value


@dataclass(frozen=True, slots=True)
class Span:
    """A source region."""

    line: int  #: 1-based first line
    column: int  #: 1-based first column (characters, not bytes)
    end_line: int  #: 1-based last line, inclusive
    end_column: int  #: 1-based column just past the region (exclusive)


@dataclass(frozen=True, slots=True)
class SeriesFigures:
    """How a traced series behaved at the worst input (see CONTRACT.md, `series`)."""

    terms: int  #: number of terms the code summed
    cancellation_log10: float | None  #: log10(sum|t_k| / |sum t_k|); None when the sum is exactly 0
    smallest_term_index: int  #: 0-based index of the term of least magnitude
    smallest_term: float  #: |t_k| at that index
    divergent: bool  #: True when the terms grow again after the smallest one
    optimal_terms: int | None = None  #: terms to keep for optimal truncation (divergent only)
    truncation_error: float | None = None  #: error estimate at optimal truncation (divergent only)
    term_magnitudes: tuple[float, ...] = ()  #: |t_k| by index k at the worst input, for plots (may be empty)


@dataclass(frozen=True, slots=True)
class Measurement:
    """What the dynamic pass measured for one unit over its samples."""

    samples: int  #: number of input points evaluated
    digits_lost_max: float | None  #: worst decimal digits lost (CONTRACT.md formula)
    digits_lost_median: float | None  #: median over the samples
    condition_log10_max: float | None  #: log10 of the largest relative componentwise condition number
    worst_inputs: dict[str, float]  #: the input point where digits_lost_max occurred
    float_value: float | None  #: what the float code returned there
    reference_value: str | None  #: the converged high-precision value there, as a decimal string
    verdict: Verdict
    reason: str  #: why, in words; for not-measured what was missing
    series: SeriesFigures | None = None
    #: per-sample (input value of the main variable, digits lost), for plots; may be empty
    points: tuple[tuple[float, float], ...] = ()


@dataclass(frozen=True, slots=True)
class Rewrite:
    """A stable replacement for the flagged source text."""

    text: str  #: the replacement source for the finding's span
    verified: bool  #: True only when the dynamic pass confirmed the gain
    digits_lost_max_after: float | None = None  #: worst digits lost by the rewrite on the same samples
    note: str = ""  #: advice or why it is unverified; not part of the JSON contract
    imports: tuple[str, ...] = ()  #: import statements the rewrite needs, e.g. "import math"
    advice: bool = False  #: changes what the code computes (e.g. a new test): offered, never verified or applied


@dataclass(frozen=True, slots=True)
class Finding:
    """One flagged site."""

    rule: str  #: rule id, kebab-case
    severity: Severity
    path: str  #: relative POSIX path as given to the scan
    span: Span
    message: str  #: one sentence a reviewer can act on
    snippet: str  #: source text of the flagged region
    function: str | None = None  #: qualified name of the enclosing function, if any
    measurement: Measurement | None = None
    rewrite: Rewrite | None = None
    fingerprint: str = ""  #: line-independent identity used by baselines
    baseline_state: str | None = None  #: "new" / "unchanged" when a baseline was given
    cell: int | None = None  #: notebooks only: 1-based cell number (all cells counted); span is within the cell

    def sort_key(self) -> tuple[str, int, int, int, str]:
        return (self.path, self.cell or 0, self.span.line, self.span.column, self.rule)

    def with_(self, **changes: Any) -> Finding:
        """A copy with some fields replaced."""
        return replace(self, **changes)


@dataclass(frozen=True, slots=True)
class FileError:
    """A file that could not be read, decoded or parsed; the run went on."""

    path: str
    message: str  #: plain reason, never a traceback


@dataclass(frozen=True, slots=True)
class Stats:
    files: int  #: files scanned (including those that produced errors)
    lines: int  #: source lines read
    seconds: float  #: wall-clock time of the run


@dataclass(frozen=True, slots=True)
class Report:
    """Everything a run produced; what every renderer takes."""

    findings: tuple[Finding, ...]
    errors: tuple[FileError, ...]
    stats: Stats
    absent: tuple[Finding, ...] = field(default=())  #: baseline entries no longer found
    unchanged: tuple[Finding, ...] = field(default=())  #: findings already in the baseline (not failing)

    def failing(self, fail_on: Severity | None) -> bool:
        """True when any finding is at or above `fail_on` (None: never fail)."""
        if fail_on is None:
            return False
        return any(f.severity.rank >= fail_on.rank for f in self.findings)
