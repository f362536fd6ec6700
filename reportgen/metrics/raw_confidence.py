"""Calibration on raw (continuous) forecasts, and the expected calibration error over bins.

The count-based :func:`reportgen.metrics.calibration.calibration` takes one forecast per level,
shared by every participant. On a continuous scale each participant has their own distinct
values, so here the forecasts are a (P, K) table aligned with the counts (the levels of
:func:`reportgen.metrics.binning.row_levels`: each row's distinct forecasts, ascending; cells
without answers are ignored). Conclusive answers only (docs/design.md §3).

With n_k = c_k + w_k answers at forecast f_k, N = Σ n_k, ō = Σ c_k / N, o_k = c_k / n_k:

* overconfidence = Σ n_k f_k / N − ō  (Lichtenstein, Fischhoff & Phillips 1982);
* brier = Σ_k [c_k (1 − f_k)² + w_k f_k²] / N  (Brier 1950), i.e. the mean over answers of
  (f − outcome)² on the raw forecasts;
* reliability = Σ n_k (f_k − o_k)² / N, resolution = Σ n_k (o_k − ō)² / N, uncertainty = ō(1 − ō)
  (Murphy 1973): each distinct forecast is its own bin, so brier = reliability − resolution +
  uncertainty exactly;
* ece over bins b of the scale (Naeini, Cooper & Hauskrecht 2015):
  Σ_b |Σ_{answers in b} f − c_b| / N = Σ_b (n_b / N) |mean forecast_b − o_b|.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]

__all__ = ["RawCalibration", "binned_ece", "calibration_on_values"]


@dataclass(frozen=True)
class RawCalibration:
    """Per-participant calibration on raw forecasts; NaN where there are no answers."""

    overconfidence: FloatArray
    brier: FloatArray
    reliability: FloatArray
    resolution: FloatArray
    uncertainty: FloatArray


def _checked(*arrays: npt.ArrayLike) -> list[FloatArray]:
    out = [np.asarray(a, dtype=np.float64) for a in arrays]
    if any(a.shape != out[0].shape or a.ndim != 2 for a in out):
        raise ValueError("need (P, K) tables of one shape")
    return out


def calibration_on_values(forecasts: npt.ArrayLike, correct_counts: npt.ArrayLike,
                          wrong_counts: npt.ArrayLike) -> RawCalibration:
    """Calibration of per-row forecasts f (P, K) given the counts (P, K) at each forecast."""
    f, correct, wrong = _checked(forecasts, correct_counts, wrong_counts)
    n_k = correct + wrong
    used = n_k > 0
    if np.any(used & ((f < 0) | (f > 1))):
        raise ValueError("forecasts must lie in [0, 1]")
    f = np.where(used, f, 0.0)
    n = n_k.sum(axis=1)
    safe = np.where(n > 0, n, 1.0)
    o_bar = correct.sum(axis=1) / safe
    o_k = np.divide(correct, n_k, out=np.zeros_like(correct), where=used)
    brier = (correct * (1 - f) ** 2 + wrong * f**2).sum(axis=1) / safe
    reliability = (n_k * (f - o_k) ** 2).sum(axis=1) / safe
    resolution = (n_k * (o_k - o_bar[:, None]) ** 2).sum(axis=1) / safe

    def masked(a: FloatArray) -> FloatArray:
        return np.asarray(np.where(n > 0, a, np.nan), dtype=np.float64)

    return RawCalibration(
        overconfidence=masked((n_k * f).sum(axis=1) / safe - o_bar),
        brier=masked(brier),
        reliability=masked(reliability),
        resolution=masked(resolution),
        uncertainty=masked(o_bar * (1 - o_bar)),
    )


def binned_ece(forecast_sums: npt.ArrayLike, correct_counts: npt.ArrayLike,
               counts: npt.ArrayLike) -> FloatArray:
    """ECE over bins from, per row and bin, the sum of the forecasts, the number right and the
    number of answers (each (P, B)). NaN where a row has no answers."""
    s, correct, n_b = _checked(forecast_sums, correct_counts, counts)
    n = n_b.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        ece = np.abs(s - correct).sum(axis=1) / n
    return np.asarray(np.where(n > 0, ece, np.nan), dtype=np.float64)
