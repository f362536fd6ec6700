"""A slow, plain reference fit of meta-d′, used only to check the fast fit in :mod:`.metad`.

Same model as :func:`reportgen.metrics.metad.fit_meta_d` (Maniscalco & Lau 2012, *Consciousness and
Cognition* 21:422–430), written the obvious way and sharing no code with it:

- type-1 d′ and c from the middle split of the (optionally padded) rating table, held fixed;
- the type-2 criteria are used directly (no re-parametrisation), ordered by constraints;
- the likelihood of each cell is computed with ``scipy.stats.norm.cdf`` and plain differences;
- many starts (the authors' own starting guess plus random ones) are run with Nelder–Mead, with an
  infinite penalty outside the ordered region, and the best is polished with SLSQP under the linear
  ordering constraints.

It takes about a second per table; it is not meant for production use.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy import optimize, stats

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True)
class ReferenceFit:
    """Result of :func:`reference_fit_meta_d`."""

    d_prime: float
    criterion: float
    meta_d: float
    log_likelihood: float


def _type1(noise: FloatArray, signal: FloatArray) -> tuple[float, float]:
    k = noise.size // 2
    hit = signal[k:].sum() / signal.sum()
    fa = noise[k:].sum() / noise.sum()
    z_h, z_f = stats.norm.ppf(hit), stats.norm.ppf(fa)
    return float(z_h - z_f), float(-(z_h + z_f) / 2)


def _neg_log_lik(
    params: FloatArray, noise: FloatArray, signal: FloatArray, d1: float, c1: float
) -> float:
    k = noise.size // 2
    meta_d = params[0]
    crit = params[1:]
    # Means of the two evidence distributions with the type-1 criterion moved to 0
    # (meta-c′ = c′: the criterion sits at meta_d * c1 / d1 on the meta-d′ axis).
    shift = meta_d * c1 / d1
    mu_noise = -meta_d / 2 - shift
    mu_signal = meta_d / 2 - shift
    edges = np.concatenate(([-np.inf], crit[: k - 1], [0.0], crit[k - 1 :], [np.inf]))
    if np.any(np.diff(edges) <= 0):
        return np.inf
    total = 0.0
    for counts, mu in ((noise, mu_noise), (signal, mu_signal)):
        cdf = stats.norm.cdf(edges, loc=mu, scale=1.0)
        cells = np.diff(cdf)
        left = stats.norm.cdf(0.0, loc=mu, scale=1.0)
        cond = np.concatenate((cells[:k] / left, cells[k:] / (1.0 - left)))
        if np.any(~np.isfinite(cond) | ((cond <= 0) & (counts > 0))):
            return np.inf
        used = counts > 0
        total += float(np.sum(counts[used] * np.log(cond[used])))
    return -total


def _author_guess(noise: FloatArray, signal: FloatArray, d1: float, c1: float) -> FloatArray:
    """Starting point as in the authors' ``fit_meta_d_MLE``: criteria from cumulative rates."""
    k = noise.size // 2
    n_n, n_s = noise.sum(), signal.sum()
    hr = np.array([signal[j:].sum() / n_s for j in range(1, 2 * k)])
    far = np.array([noise[j:].sum() / n_n for j in range(1, 2 * k)])
    hr = np.clip(hr, 0.5 / n_s, 1 - 0.5 / n_s)
    far = np.clip(far, 0.5 / n_n, 1 - 0.5 / n_n)
    cs = -(stats.norm.ppf(hr) + stats.norm.ppf(far)) / 2
    t2 = np.delete(cs, k - 1) - c1
    left = np.minimum.accumulate(np.minimum(t2[: k - 1], -0.01)[::-1] - 0.01 * np.arange(k - 1))
    right = np.maximum.accumulate(np.maximum(t2[k - 1 :], 0.01) + 0.01 * np.arange(k - 1))
    return np.concatenate(([d1], left[::-1], right))


def reference_fit_meta_d(
    noise_counts: npt.ArrayLike,
    signal_counts: npt.ArrayLike,
    pad: bool = True,
    n_starts: int = 20,
    seed: int = 12345,
) -> ReferenceFit:
    """Maximum-likelihood meta-d′ by brute force (multi-start Nelder–Mead, then SLSQP)."""
    noise = np.asarray(noise_counts, dtype=float)
    signal = np.asarray(signal_counts, dtype=float)
    k = noise.size // 2
    if pad:
        noise = noise + 1 / (2 * k)
        signal = signal + 1 / (2 * k)
    d1, c1 = _type1(noise, signal)
    rng = np.random.default_rng(seed)
    guess = _author_guess(noise, signal, d1, c1)
    starts = [guess]
    for _ in range(n_starts - 1):
        left = -np.sort(rng.exponential(1.0, k - 1).cumsum())
        right = rng.exponential(1.0, k - 1).cumsum()
        starts.append(np.concatenate(([rng.uniform(-1.0, 1.0) + d1], np.sort(left), right)))

    def objective(x: FloatArray) -> float:
        with np.errstate(all="ignore"):
            return _neg_log_lik(x, noise, signal, d1, c1)

    best: Any = None
    with np.errstate(all="ignore"):
        for x0 in starts:
            res = optimize.minimize(
                objective,
                x0,
                method="Nelder-Mead",
                options={"xatol": 1e-9, "fatol": 1e-11, "maxiter": 40000, "maxfev": 40000},
            )
            if best is None or res.fun < best.fun:
                best = res
    # Ordering constraints: criteria ascending, the first K-1 below 0 and the rest above 0.
    n_par = 2 * k - 1
    rows = []
    for j in range(1, n_par - 1):
        if j == k - 1:
            continue
        row = np.zeros(n_par)
        row[j + 1], row[j] = 1.0, -1.0
        rows.append(row)
    a_ineq = np.array(rows).reshape(-1, n_par)
    sign = np.zeros((2, n_par))
    sign[0, k - 1] = -1.0  # innermost "noise" criterion below 0
    sign[1, k] = 1.0  # innermost "signal" criterion above 0
    a_all = np.vstack([a_ineq, sign])
    cons = {"type": "ineq", "fun": lambda x: a_all @ x - 1e-9}
    polished = optimize.minimize(
        objective,
        best.x,
        method="SLSQP",
        constraints=[cons],
        options={"ftol": 1e-13, "maxiter": 500},
    )
    final = polished if polished.success and polished.fun <= best.fun else best
    return ReferenceFit(
        d_prime=d1, criterion=c1, meta_d=float(final.x[0]), log_likelihood=-float(final.fun)
    )
