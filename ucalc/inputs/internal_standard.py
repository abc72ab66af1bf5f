"""Internal standardisation from raw signals: the analyte/internal-standard ratio of each reading, and recovery.

Plasma-MS readings drift with sample uptake and plasma conditions; the internal standard (IS) added at the same
concentration to every solution follows the same drift. The ratio is formed per reading, R = I_analyte / I_IS,
and the calibration line is fitted on the ratios (EURACHEM/CITAC CG4 A5 treats the response as given; the ratio
is the response here). Because analyte and IS in one reading share the drift, their signals are positively
correlated; the scatter of the per-reading ratios already shows how much of the drift the ratio cancels, so the
Type A uncertainty of the ratios carries that correlation and no coefficient between the two signals is entered
(entering one as well would count it twice).

The IS recovery of a reading set is mean(I_IS of its readings) / mean(I_IS of every standard reading), in %; a
recovery outside the window the budget states (default 70-130 %) is a warning of matrix suppression or
enhancement.
"""

from __future__ import annotations

import math

from pydantic import BaseModel, ConfigDict, Field, model_validator

DEFAULT_WINDOW = (70.0, 130.0)  # % recovery of the internal standard  # common practice


class StandardSignals(BaseModel):
    """Raw count rates of every standard: one list of replicate readings per standard."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    analyte: list[list[float]] = Field(min_length=1, max_length=10_000)
    internal_standard: list[list[float]] = Field(min_length=1, max_length=10_000)

    @model_validator(mode="after")
    def _check(self) -> StandardSignals:
        if len(self.analyte) != len(self.internal_standard):
            raise ValueError("signals: 'analyte' and 'internal_standard' need one list of readings per standard")
        for i, (an, st) in enumerate(zip(self.analyte, self.internal_standard, strict=True)):
            check_pair(an, st, f"standard {i + 1}")
        return self


class ReadingSignals(BaseModel):
    """Raw count rates of one solution: analyte and IS, one value per replicate reading."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    analyte: list[float] = Field(min_length=1, max_length=10_000)
    internal_standard: list[float] = Field(min_length=1, max_length=10_000)

    @model_validator(mode="after")
    def _check(self) -> ReadingSignals:
        check_pair(self.analyte, self.internal_standard, "reading")
        return self


def check_pair(analyte: list[float], internal: list[float], what: str) -> None:
    if len(analyte) != len(internal):
        raise ValueError(f"{what}: {len(analyte)} analyte but {len(internal)} internal-standard readings; "
                         "give one of each per reading")
    if not analyte:
        raise ValueError(f"{what}: no readings")
    if any(v <= 0 for v in internal):
        raise ValueError(f"{what}: internal-standard count rates must be above zero")


def ratios(analyte: list[float], internal: list[float]) -> list[float]:
    """Per-reading ratio I_analyte / I_IS."""
    return [a / i for a, i in zip(analyte, internal, strict=True)]


def standards_mean(signals: StandardSignals) -> float:
    """Mean IS count rate over every standard reading, the reference for recoveries."""
    values = [v for reps in signals.internal_standard for v in reps]
    return math.fsum(values) / len(values)


def recovery(reading: ReadingSignals, reference: float) -> float:
    """IS recovery of a reading set against the standards' mean, in %."""
    return 100.0 * math.fsum(reading.internal_standard) / len(reading.internal_standard) / reference
