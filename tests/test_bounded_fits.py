"""Every fit finishes (issue 10, point 4): no input makes scoring run unbounded.

The input that hung: a probability confidence scale 0–100 with min = 0 and real-valued answers
(every distinct value became a level, and the meta-d′ fit of thousands of levels never finished).
Iterative fits now cap the levels, the iterations and the time, and report "not estimable" with a
reason instead. These are not speed tests: a SIGALRM guard turns a hang back into a failure.
"""

from __future__ import annotations

import re
import signal
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reportgen.metrics import metad
from reportgen.metrics.metad_fit import Batch, fit_batch
from reportgen.pipeline import score_folder
from reportgen.settings import Settings
from tests.conftest import ROUND_TOML

MakeRound = Callable[..., Path]
GUARD_SECONDS = 300  # far above any legitimate run: only a hang reaches it


@contextmanager
def finishes_within(seconds: int) -> Iterator[None]:
    def hung(signum: int, frame: object) -> None:
        raise AssertionError(f"did not finish within {seconds} s: unbounded")

    previous = signal.signal(signal.SIGALRM, hung)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def _probability_round(rng: np.random.Generator, lo: float, hi: float, n_part: int,
                       n_items: int, decimals: int) -> dict[str, str]:
    """A round on a probability scale ``lo``–``hi`` with real-valued answers."""
    toml = re.sub(r"\[confidence\][^\[]*",
                  f'[confidence]\nkind = "probability"\nmin = {lo:g}\nmax = {hi:g}\n\n',
                  ROUND_TOML)
    truth = ["same" if i % 2 else "different" for i in range(n_items)]
    items = "item,truth\n" + "".join(f"I{i},{t}\n" for i, t in enumerate(truth))
    rows = ["participant,item,decision,confidence"]
    for p in range(n_part):
        d = rng.uniform(0.5, 3.0)
        for i, t in enumerate(truth):
            x = rng.normal(d / 2 if t == "same" else -d / 2, 1.0)
            decision = "same" if x > 0.3 else "different" if x < -0.3 else "inconclusive"
            conf = round(float(np.clip(lo + (hi - lo) * abs(np.tanh(x)), lo, hi)), decimals)
            rows.append(f"P{p:03d},I{i},{decision},{conf}")
    participants = "participant,name,organisation\n" + "".join(
        f"P{p:03d},Name {p},Lab {p % 3}\n" for p in range(n_part))
    return {"round.toml": toml, "items.csv": items, "responses.csv": "\n".join(rows) + "\n",
            "participants.csv": participants}


def _write(folder: Path, files: dict[str, str]) -> Path:
    folder.mkdir(parents=True)
    for name, text in files.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def _check_insight(folder: Path) -> None:
    with finishes_within(GUARD_SECONDS):
        results = score_folder(folder, Settings())
    for p in results.participants:
        for name in ("meta_d", "m_ratio"):
            metric = p.metrics[name]
            assert (metric.value is not None and np.isfinite(metric.value)) or metric.note, (
                p.code, name)


def test_the_input_that_hung_finishes(tmp_path: Path) -> None:
    # Regression (issue 10): probability scale 0–100, min = 0, real-valued answers.
    files = _probability_round(np.random.default_rng(10), 0, 100, 40, 60, decimals=2)
    _check_insight(_write(tmp_path / "round", files))


@settings(max_examples=8, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(lo=st.sampled_from([0.0, 0.5, 10.0, 50.0]), span=st.sampled_from([1.0, 40.0, 50.0]),
       decimals=st.integers(0, 4), seed=st.integers(0, 2**16))
def test_random_probability_scales_finish(tmp_path: Path, lo: float, span: float, decimals: int,
                                          seed: int) -> None:
    hi = min(100.0, lo + span)
    files = _probability_round(np.random.default_rng(seed), lo, hi, 6, 16, decimals)
    _check_insight(_write(tmp_path / f"r{seed}-{decimals}-{lo:g}-{span:g}", files))


# ---------------------------------------------------------------------------- metrics level


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(k=st.integers(1, 60), data=st.data())
def test_random_tables_of_any_size_finish_with_a_number_or_a_reason(
    k: int, data: st.DataObject
) -> None:
    cells = st.lists(st.integers(0, 30), min_size=2 * k, max_size=2 * k)
    noise = np.array([data.draw(cells) for _ in range(3)])
    signal_ = np.array([data.draw(cells) for _ in range(3)])
    with finishes_within(GUARD_SECONDS):
        fits = metad.fit_meta_d_many(noise, signal_)
        intervals = metad.meta_d_profile_intervals(noise, signal_, fits)
        metad.meta_d_intervals(noise, signal_, fits, [1, 2, 3], n_boot=20)
    for fit, ci in zip(fits, intervals, strict=True):
        assert (fit.meta_d is not None and np.isfinite(fit.meta_d)) or fit.note
        if k > metad.MAX_LEVELS:
            assert fit.note == metad.NOTE_TOO_MANY_LEVELS and ci.meta_d_low is None


def test_fit_stops_at_its_time_limit_and_says_so() -> None:
    # A zero time budget: every table is reported as not finished, never kept half-fitted.
    noise = np.array([[52.0, 32, 35, 37, 26, 12, 4, 2]]) + 0.125
    signal_ = np.array([[2.0, 5, 15, 22, 33, 38, 40, 45]]) + 0.125
    fit = fit_batch(Batch(noise, signal_, np.array([1.5]), np.array([0.0])), time_limit=0.0)
    assert fit.timed_out.all() and not fit.converged.any()


def test_profile_and_bootstrap_stop_at_their_time_limit() -> None:
    fits = metad.fit_meta_d_many([[52, 32, 35, 37, 26, 12, 4, 2]], [[2, 5, 15, 22, 33, 38, 40, 45]])
    (ci,) = metad.meta_d_profile_intervals([[52, 32, 35, 37, 26, 12, 4, 2]],
                                           [[2, 5, 15, 22, 33, 38, 40, 45]], fits, time_limit=0.0)
    assert ci.meta_d_low is None
    (boot,) = metad.meta_d_intervals([[52, 32, 35, 37, 26, 12, 4, 2]],
                                     [[2, 5, 15, 22, 33, 38, 40, 45]], fits, [1], n_boot=50,
                                     time_limit=0.0)
    assert boot.meta_d_low is None


@pytest.mark.parametrize("k", [metad.MAX_LEVELS + 1, 500])
def test_too_many_levels_is_not_estimable_with_a_reason(k: int) -> None:
    rng = np.random.default_rng(k)
    noise, signal_ = rng.integers(0, 3, (2, 2 * k)), rng.integers(0, 3, (2, 2 * k))
    for fit in metad.fit_meta_d_many(noise, signal_):
        assert fit.meta_d is None and fit.note == metad.NOTE_TOO_MANY_LEVELS
