"""Simulate critical values of Johansen's trace and maximum-eigenvalue tests, cases 2 and 4.

reportgen's own table for the restricted cases (constant restricted to the cointegrating
relation: case 2; trend restricted to it: case 4). Under the null hypothesis of rank r the
statistics depend only on n - r, so each dimension p = n - r is simulated as p independent
driftless Gaussian random walks of length T, with no lagged differences, and the 90/95/99%
quantiles of the statistics are taken over the replications. Seeded: the same command prints the
same table. Run: ``python tools/johansen_restricted_cases.py`` (about a minute on two cores).

References
----------
Johansen, S. (1995). Likelihood-Based Inference in Cointegrated Vector Autoregressive Models.
Oxford University Press (the statistics and the five deterministic cases).
"""

from __future__ import annotations

import numpy as np

SEED = 20261201
NOBS = 1000
REPLICATIONS = 20_000
CHUNK = 500
DIMENSIONS = range(1, 7)
QUANTILES = (0.90, 0.95, 0.99)


def _residualise(values: np.ndarray, regressors: np.ndarray | None) -> np.ndarray:
    """Residuals of a batch of regressions (batch, T, k) on shared regressors (T, m)."""
    if regressors is None:
        return values
    coefficients, *_ = np.linalg.lstsq(regressors, values.transpose(1, 0, 2).reshape(values.shape[1], -1),
                                       rcond=None)
    fitted = (regressors @ coefficients).reshape(values.shape[1], values.shape[0], values.shape[2])
    return values - fitted.transpose(1, 0, 2)


def statistics(walks: np.ndarray, case: int) -> tuple[np.ndarray, np.ndarray]:
    """Trace and maximum-eigenvalue statistics for a batch of p-dimensional walks (batch, T+1, p)."""
    steps = np.diff(walks, axis=1)
    levels = walks[:, :-1, :]
    count = steps.shape[1]
    if case == 2:
        level_term = np.concatenate([levels, np.ones((walks.shape[0], count, 1))], axis=2)
        short_run = None
    elif case == 4:
        trend = np.broadcast_to(np.arange(1.0, count + 1.0)[None, :, None], (walks.shape[0], count, 1))
        level_term = np.concatenate([levels, trend], axis=2)
        short_run = np.ones((count, 1))
    else:
        raise ValueError("only the restricted cases 2 and 4 are simulated here")
    r0 = _residualise(steps, short_run)
    r1 = _residualise(level_term, short_run)
    s00 = np.einsum("bti,btj->bij", r0, r0) / count
    s01 = np.einsum("bti,btj->bij", r0, r1) / count
    s11 = np.einsum("bti,btj->bij", r1, r1) / count
    product = np.linalg.solve(s11, np.transpose(s01, (0, 2, 1))) @ np.linalg.solve(s00, s01)
    eigenvalues = np.sort(np.clip(np.linalg.eigvals(product).real, 0.0, 1.0 - 1e-15), axis=1)[:, ::-1]
    eigenvalues = eigenvalues[:, : walks.shape[2]]
    logs = -count * np.log1p(-eigenvalues)
    return logs.sum(axis=1), logs[:, 0]


def simulate() -> dict[tuple[int, str], dict[int, tuple[float, float, float]]]:
    """Quantiles by (case, statistic) and dimension n - r."""
    rng = np.random.default_rng(SEED)
    table: dict[tuple[int, str], dict[int, tuple[float, float, float]]] = {}
    for case in (2, 4):
        for dimension in DIMENSIONS:
            traces, maxima = [], []
            for _ in range(REPLICATIONS // CHUNK):
                walks = np.cumsum(rng.standard_normal((CHUNK, NOBS + 1, dimension)), axis=1)
                trace, maximum = statistics(walks, case)
                traces.append(trace)
                maxima.append(maximum)
            for name, values in (("trace", np.concatenate(traces)), ("max-eigenvalue", np.concatenate(maxima))):
                table.setdefault((case, name), {})[dimension] = tuple(
                    round(float(q), 2) for q in np.quantile(values, QUANTILES))
    return table


if __name__ == "__main__":
    for (case, name), rows in simulate().items():
        print(f"case {case} {name}:")
        for dimension, row in rows.items():
            print(f"  n-r={dimension}: {row}")
