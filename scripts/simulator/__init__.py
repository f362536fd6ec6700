"""A seeded simulator of proficiency-testing rounds: the invented sample rounds and benchmark data.

Everything here is invented. The scenario of the sample rounds is a fictional provider,
"Harbourline Proficiency Services" of Port Ellery, running an annual facial image comparison (FIC)
round: each item pairs a body-worn-camera still with a reference portrait from a consented volunteer
session; examiners answer ``same`` / ``different`` / ``inconclusive`` with a confidence 1-5.
No real person, organisation, photograph or result is represented.

Development tooling, not part of the installed package (it needs pandas; reportgen does not). The
importers run from the repository root, where ``scripts`` is importable (a namespace package).

Modules
-------
* ``scenario``  - seeds, sample years and layouts, organisations, :class:`RoundMeta`;
* ``observers`` - the latent model below: examiners, items, answers, self-estimates;
* ``rounds``    - :class:`SimulatedRound`, :func:`simulate_round`, :func:`sample_rounds`,
  :func:`summary`;
* ``toml_text`` - :func:`round_toml`;
* ``xlsx``      - the deterministic xlsx writer;
* ``writing``   - :func:`write_round`, :func:`write_sample_rounds`.

Latent model
------------
Each **examiner** ``p`` has, for a given year,

* ``d_prime``   ability, spread 0.5-3.5 (``0.5 + 3 * Beta(4, 1.8)``, mean about 2.6); a random
  quarter improve by 0.05-0.20 a year, and everyone drifts a little (normal, sd 0.12) from year to
  year;
* ``criterion`` response criterion ``c`` (normal, mean 0.4, sd 0.25): reluctant to say "same",
  the costly error in identification work, so misses outnumber false positives;
* ``band``      half-width of the inconclusive band around ``c``: light users of ``inconclusive``
  (0.03-0.25, seven in ten) and heavy users (0.45-0.9);
* ``m_ratio``   target metacognitive efficiency: good insight (0.8-1.0, four in ten), middling
  (0.45-0.8) and poor insight (0.2-0.45, a quarter);
* ``conf_shift`` shifts the confidence thresholds (normal, sd 0.15; negative: readier to say 4
  or 5);
* ``est_bias``  personal bias of the self-estimate (normal, sd 0.06).

Traits are drawn once per examiner and carried across years with the small drift above
(``criterion`` sd 0.08, ``band`` x lognormal sd 0.1, ``m_ratio`` sd 0.04, ``conf_shift`` sd 0.05).

Each **item** ``i`` has a truth ``s_i`` (+1 same source, -1 different source; half each),
attributes ``quality`` (good / fair / poor), ``pose`` (frontal / three-quarter / profile) and
``age_gap_years`` (years between the two photographs: 0-20 for every same-source pair; for a
different-source pair only where both capture dates were recorded, else blank). They set an
*ease* ``e_i`` in (0, 1]: quality x {1, 0.9, 0.75}, pose x {1, 0.92, 0.8}, and for same-source
pairs x ``exp(-age_gap / 60)``. Items also carry a shared shift ``delta_i`` (normal, sd 0.15); about
one in thirty items is a trap - a look-alike different-source pair or a changed-appearance
same-source pair - whose shift of 0.6-1.0 points towards the wrong answer, so that even strong
examiners sometimes answer against the key.

Type-1 evidence: ``x = s_i * d_prime * e_i / 2 + delta_i + N(0, 1)``.
Decision: ``same`` if ``x > c + band``, ``different`` if ``x < c - band``, else ``inconclusive``.

Type-2 evidence, for confidence, follows the meta-d' model of Maniscalco & Lau (2012): a second
SDT observer whose sensitivity is ``m * d'`` (``m = m_ratio``; evidence mean ``m * mean(x)``,
criterion and band edges ``m * (c +- band)``, unit noise) is read on the side of the decision
actually made, i.e. ``y`` is drawn from that observer's normal distribution truncated to the
decision's side of its band edge. ``m = 1`` gives confidence as informative as the decision itself;
``m = 0.3`` gives confidence that hardly separates right from wrong. With no inconclusive band the
M-ratio estimated by maximum likelihood recovers ``m`` (checked by simulation over d' 1-3); with a
band it comes out lower, because the conclusive-only table inflates d' (a property of scoring
conclusive answers only, not of the simulator). For a conclusive answer the confidence is 1 + the
number of thresholds ``s_p * (conf_shift + (0.1, 0.3, 0.65, 1.15))`` that the depth of ``y`` beyond
its band edge exceeds, where ``s_p = sqrt(1 + mean_i (m * (mean(x) - c))^2)`` is the spread of the
examiner's own type-2 evidence - so weak examiners use the whole scale too and come out
overconfident. For ``inconclusive`` the confidence (in that conclusion) is higher the nearer
``x + (1 - m) * N(0, 1)`` lies to ``c``: 1 + the number of ``(0, 0.35, 0.7, 0.92)`` that
``1 - |y - c| / band`` exceeds.

Self-estimate (``when = after``): percent of items the examiner believes they answered correctly,
``100 * (accuracy + 0.03 + 0.3 * (group mean accuracy - accuracy) + est_bias + N(0, 0.03))``,
rounded and clipped to 0-100. The weak thus tend to overestimate a little, the strong to
underestimate a little. About nine in ten examiners return an estimate.

The examiner who never errs
---------------------------
In the sample rounds the examiner :data:`NEVER_ERRS` (``"E0107"``) takes part every year with high
ability (d' 3.5), a conservative criterion and a moderate inconclusive band, and always returns an
estimate; the few answers of theirs that the model makes wrong (typically traps) are turned into
``inconclusive`` with confidence 2, so they make no error in any of the three years - a case where
the insight indices are not estimable ("no errors").

Participation
-------------
The sample pool has stable codes across years, numbered in order of registration: ``E`` + four
digits, and seven purely numeric codes with leading zeros (e.g. ``"0028"``) to exercise text
handling. FIC-2024 has 120 examiners; ten leave after 2024, two skip 2025 and return in 2026, twelve
join in 2025, nine leave after 2025 and nine join in 2026. Fifteen invented organisations; four
have fewer than five members in the pool (a few more fall below five in a given round).

Determinism
-----------
Every draw comes from :func:`numpy.random.default_rng` seeded with a tuple of fixed integers; no
wall clock is read. Rows are sorted: participants by code, items in key order. CSV files are UTF-8
with ``\\n`` line endings; the xlsx workbook has its document dates fixed to the round's issue date
and fixed zip entry timestamps, so two generations are byte-identical.
"""

from __future__ import annotations

from scripts.simulator.rounds import SimulatedRound, sample_rounds, simulate_round, summary
from scripts.simulator.scenario import (
    DECISIONS,
    NEVER_ERRS,
    ORGANISATIONS,
    SAMPLE_LAYOUTS,
    SAMPLE_SEED,
    SAMPLE_YEARS,
    Layout,
    ResponsesFormat,
    RoundMeta,
)
from scripts.simulator.toml_text import round_toml
from scripts.simulator.writing import write_round, write_sample_rounds

__all__ = [
    "DECISIONS",
    "NEVER_ERRS",
    "ORGANISATIONS",
    "SAMPLE_LAYOUTS",
    "SAMPLE_SEED",
    "SAMPLE_YEARS",
    "Layout",
    "ResponsesFormat",
    "RoundMeta",
    "SimulatedRound",
    "round_toml",
    "sample_rounds",
    "simulate_round",
    "summary",
    "write_round",
    "write_sample_rounds",
]
