"""The separators table (benchmarks/separators_table.py, README) reproduced on a small fixed set of windows.

The table ranks every registered separator by its mean score on the val scenes. Here the same code scores every
separator on the same windows of three seeded random-walk episodes in the small test room at fast acoustics, and
the ranking must be the table's. The table's measured ranking is the expectation (it is a measurement of this
benchmark, not a fact from outside); the physical reasons behind its order are: the oracle's ideal ratio mask
knows the target's early image (Narayanan & Wang 2013); an MVDR whose noise covariance is estimated without the
target can null the distractors (Capon 1969; Hadad et al. 2016), and the rank-one MWF adds a Wiener gain to it
(Simmer et al. 2001), which removes more noise and damages more target; two ears give delay-and-sum a broad beam
(Van Trees 2002); the unprocessed mixture (identity) is the input reference.
"""

from __future__ import annotations

import numpy as np

from benchmarks.separators_table import episode_means
from hearnav.separation import separator_names

#: benchmarks/separators_table.py on the val scenes (README): mean score and its 95 % bootstrap CI, dB.
TABLE = {"oracle-mask": (5.79, 4.67, 7.04), "identity": (-8.75, -10.55, -6.41), "delay-and-sum": (-11.89, -13.80, -9.08),
         "spatial-mask": (-13.34, -15.81, -9.93), "mvdr": (-14.59, -16.99, -11.44), "mwf": (-17.42, -20.62, -13.68)}


def resolved_pairs() -> list[tuple[str, str]]:
    """(better, worse) pairs the table resolves: their 95 % confidence intervals do not overlap."""
    return [(a, b) for a in TABLE for b in TABLE if TABLE[a][1] > TABLE[b][2]]


def test_the_table_ranking_is_reproduced_on_a_few_windows(make_env):
    env = make_env(separator="oracle-mask", budget=4, distractors=(1, 2))
    names = separator_names()
    assert sorted(names) == sorted(TABLE)
    per_episode = [episode_means(env, names, seed) for seed in (11, 12, 13)]
    means = {name: np.mean([e[name][0] for e in per_episode]) for name in names}
    pairs = resolved_pairs()
    assert len(pairs) >= 7  # the oracle above all five, and the mixture above both beamformers
    for better, worse in pairs:
        assert means[better] > means[worse], (better, worse, means)
    # The table's intervals do not separate identity (the default) from delay-and-sum and spatial-mask, so their
    # order is not asserted here: in this small shoebox spatial-mask can come first.
