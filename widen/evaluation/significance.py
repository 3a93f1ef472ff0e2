"""Is one method's per-query score different from another's by more than chance?

The paired randomisation test (Fisher's permutation test, recommended for IR by Smucker, Allan
and Carterette 2007, "A Comparison of Statistical Significance Tests for Information Retrieval
Evaluation"): under the null hypothesis the two methods' scores of a query are exchangeable, so
each pair's difference keeps or flips its sign at random. The p-value is the share of sign
assignments whose mean difference is at least as far from zero as the observed one. scipy's
`permutation_test` enumerates every assignment when there are few, and samples otherwise.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt
from scipy.stats import permutation_test

__all__ = ["paired_randomisation"]


def paired_randomisation(a: npt.ArrayLike, b: npt.ArrayLike, resamples: int = 10_000, seed: int = 0) -> float:
    """Two-sided p-value of the mean of a - b; 1.0 when the scores are identical."""
    x, y = np.asarray(a, dtype=np.float64), np.asarray(b, dtype=np.float64)
    if x.shape != y.shape:
        raise ValueError("paired scores must have the same length")
    if x.size == 0 or np.allclose(x, y):
        return 1.0
    result = permutation_test(
        (x, y),
        lambda u, v, axis: np.mean(u - v, axis=axis),
        permutation_type="samples",
        vectorized=True,
        n_resamples=resamples,
        alternative="two-sided",
        random_state=seed,
    )
    return float(result.pvalue)
