"""How many errors insight estimates need before they are read as stable.

Kept apart from :mod:`.metad` so that reading a round (which sets the default of
``[scoring] few_errors``) does not load the fitting code and SciPy's optimisers.
"""

from __future__ import annotations

FEW_ERRORS_THRESHOLD = 11
"""Fewer conclusive errors than this: meta-d′ and the M-ratio are flagged as unstable.

Basis: ``scripts/simulate_metad_stability.py`` (numbers in ``docs/metacognition.md``). Ideal
observers (true M-ratio 1), 60 items, K = 5, d′ ~ U(1.5, 2): among those who made e errors, fewer
than 90 % get an M-ratio within a factor of two of the truth (0.5–2) for every e ≤ 10 (89 % at 10,
67 % at 5), and the median is biased low (0.86 at 10 errors, 0.60 at 5): with few errors, a lucky
run inflates d′ and an ideal observer looks like a poor one. At 11–17 errors 91–95 % (above that,
such a participant's d′ is small and the ratio widens for that reason). The cut depends on the
design (5–14 errors for other populations and round lengths, see the note); no published minimum
was found."""
