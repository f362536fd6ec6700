"""Signal detection theory: d', criterion and the area under the rating ROC.

References: Macmillan & Creelman, *Detection Theory: A User's Guide* (2nd ed. 2005); Stanislaw &
Todorov (1999), *Behav Res Methods Instrum Comput* 31:137; Hautus (1995), *Behav Res Methods
Instrum Comput* 27:46 (log-linear correction); Gourevitch & Galanter (1967), *Psychometrika*
32:25 (variance of d'); Hanley & McNeil (1982), *Radiology* 143:29 (ROC area = Mann–Whitney).

Every function works on leading (e.g. participant) axes; rating counts lie on the last axis.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy import stats

FloatArray = npt.NDArray[np.float64]
ObjectArray = npt.NDArray[np.object_]


@dataclass(frozen=True)
class SDTResult:
    """Yes/no signal detection indices; every field has the broadcast shape of the inputs.

    ``hit_rate`` and ``fa_rate`` are the log-linear corrected rates the indices are computed from.
    All indices are NaN where ``n_signal == 0`` or ``n_noise == 0``; :meth:`reason` says which.
    """

    hit_rate: FloatArray
    fa_rate: FloatArray
    d_prime: FloatArray
    criterion: FloatArray
    d_prime_se: FloatArray
    n_signal: FloatArray
    n_noise: FloatArray

    def reason(
        self, no_signal: str = "no signal trials", no_noise: str = "no noise trials"
    ) -> ObjectArray:
        """Why d' is not estimable (the signal class is checked first), else None."""
        out = np.full(self.n_noise.shape, None, dtype=object)
        out[self.n_noise == 0] = no_noise
        out[self.n_signal == 0] = no_signal
        return out


def gourevitch_galanter_se(
    hit_rate: npt.ArrayLike,
    fa_rate: npt.ArrayLike,
    n_signal: npt.ArrayLike,
    n_noise: npt.ArrayLike,
) -> FloatArray:
    """Standard error of d' (Gourevitch & Galanter 1967)::

        var(d') = H(1 − H) / (n_S φ(z_H)²) + F(1 − F) / (n_N φ(z_F)²)

    with φ the standard normal density. The rates are used as given (no correction).
    NaN where a trial count is 0 or a rate is 0 or 1.
    """
    h = np.asarray(hit_rate, dtype=np.float64)
    f = np.asarray(fa_rate, dtype=np.float64)
    ns = np.asarray(n_signal, dtype=np.float64)
    nn = np.asarray(n_noise, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        phi_h = stats.norm.pdf(stats.norm.ppf(h))
        phi_f = stats.norm.pdf(stats.norm.ppf(f))
        var = h * (1 - h) / (ns * phi_h**2) + f * (1 - f) / (nn * phi_f**2)
        se = np.sqrt(var)
    bad = (ns <= 0) | (nn <= 0) | ~np.isfinite(se)
    return np.asarray(np.where(bad, np.nan, se), dtype=np.float64)


def sdt_loglinear(
    hits: npt.ArrayLike,
    n_signal: npt.ArrayLike,
    false_alarms: npt.ArrayLike,
    n_noise: npt.ArrayLike,
) -> SDTResult:
    """d' and criterion c with the log-linear correction applied to every participant.

    Hautus (1995)::

        H = (hits + 0.5) / (n_signal + 1)       F = (false_alarms + 0.5) / (n_noise + 1)
        d' = z(H) − z(F)                        c = −(z(H) + z(F)) / 2

    with z = Φ⁻¹ (Macmillan & Creelman 2005, ch. 1–2). (A variant with denominator n + 1.5 is not
    Hautus's and is not used.) ``d_prime_se`` is :func:`gourevitch_galanter_se` on the corrected
    rates with the actual trial counts n_signal, n_noise. All indices are NaN where a count is 0.

    Raises ValueError on negative counts or hits > n_signal, false_alarms > n_noise.
    """
    h, ns, fa, nn = np.broadcast_arrays(
        *(np.asarray(a, dtype=np.float64) for a in (hits, n_signal, false_alarms, n_noise))
    )
    if np.any(h < 0) or np.any(fa < 0) or np.any(h > ns) or np.any(fa > nn):
        raise ValueError("need 0 <= hits <= n_signal and 0 <= false_alarms <= n_noise")
    missing = (ns == 0) | (nn == 0)
    hit_rate = (h + 0.5) / (ns + 1.0)
    fa_rate = (fa + 0.5) / (nn + 1.0)
    z_h = stats.norm.ppf(hit_rate)
    z_f = stats.norm.ppf(fa_rate)
    d_prime = z_h - z_f
    criterion = -(z_h + z_f) / 2.0 + 0.0  # + 0.0 turns -0.0 into 0.0
    se = gourevitch_galanter_se(hit_rate, fa_rate, ns, nn)

    def masked(a: npt.ArrayLike) -> FloatArray:
        return np.asarray(np.where(missing, np.nan, a), dtype=np.float64)

    return SDTResult(
        hit_rate=masked(hit_rate),
        fa_rate=masked(fa_rate),
        d_prime=masked(d_prime),
        criterion=masked(criterion),
        d_prime_se=masked(se),
        n_signal=np.asarray(ns, dtype=np.float64),
        n_noise=np.asarray(nn, dtype=np.float64),
    )


def rating_auc(noise_counts: npt.ArrayLike, signal_counts: npt.ArrayLike) -> FloatArray:
    """Trapezoidal area under the rating ROC, from counts by rating on the last axis.

    Ratings are ordered "sure noise" … "sure signal". The trapezoid area equals the Mann–Whitney
    statistic (Hanley & McNeil 1982)::

        AUC = P(signal rating > noise rating) + ½ P(tie)
            = Σ_j s_j (Σ_{i<j} n_i + ½ n_j) / (N_S N_N)

    Shape (..., L) in, (...) out. NaN where either total is 0 (see :func:`rating_auc_reason`).
    """
    noise = np.asarray(noise_counts, dtype=np.float64)
    signal = np.asarray(signal_counts, dtype=np.float64)
    noise, signal = np.broadcast_arrays(noise, signal)
    if noise.ndim == 0 or np.any(noise < 0) or np.any(signal < 0):
        raise ValueError("rating_auc needs non-negative counts with ratings on the last axis")
    below = np.cumsum(noise, axis=-1) - noise
    numerator = np.sum(signal * (below + 0.5 * noise), axis=-1)
    denominator = np.sum(noise, axis=-1) * np.sum(signal, axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        auc = numerator / denominator
    return np.asarray(np.where(denominator == 0, np.nan, auc), dtype=np.float64)


def rating_auc_reason(
    noise_counts: npt.ArrayLike,
    signal_counts: npt.ArrayLike,
    no_signal: str = "no signal trials",
    no_noise: str = "no noise trials",
) -> ObjectArray:
    """Why :func:`rating_auc` is NaN (the signal class is checked first), else None."""
    n_noise = np.sum(np.asarray(noise_counts, dtype=np.float64), axis=-1)
    n_signal = np.sum(np.asarray(signal_counts, dtype=np.float64), axis=-1)
    n_noise, n_signal = np.broadcast_arrays(n_noise, n_signal)
    out = np.full(n_noise.shape, None, dtype=object)
    out[n_noise == 0] = no_noise
    out[n_signal == 0] = no_signal
    return out
