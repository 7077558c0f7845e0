"""Log-space array helpers shared by the engine, flags, measures and batch code.

Pure numpy: no pandas, no case objects.
"""

from __future__ import annotations

import numpy as np


def log_of(p: np.ndarray) -> np.ndarray:
    """Natural log with exact zeros mapped to ``-inf`` (no warning)."""
    with np.errstate(divide="ignore"):
        return np.log(np.asarray(p, dtype=float))


def log_normalizer(logw: np.ndarray, axis: int = -1) -> np.ndarray:
    """``log(sum(exp(logw)))`` along ``axis``; ``-inf`` where every entry is ``-inf``.

    Same result as :func:`scipy.special.logsumexp` (the tests compare them),
    written out so a row of all ``-inf`` gives ``-inf`` without a warning.
    """
    logw = np.asarray(logw, dtype=float)
    m = np.max(logw, axis=axis, keepdims=True)
    finite = np.isfinite(m)
    shift = np.where(finite, m, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.sum(np.exp(logw - shift), axis=axis, keepdims=True)
        out = np.log(s) + shift
    out = np.where(finite, out, m)  # all -inf row stays -inf
    return np.squeeze(out, axis=axis)


def normalize_log(logw: np.ndarray, axis: int = -1) -> np.ndarray:
    """Normalized probabilities from unnormalized log weights (rows of all -inf give NaN)."""
    z = log_normalizer(logw, axis=axis)
    with np.errstate(invalid="ignore"):
        return np.exp(logw - np.expand_dims(z, axis))


def posterior_from_logs(log_prior: np.ndarray, total_loglik: np.ndarray) -> np.ndarray:
    """Posterior probabilities from log prior and summed log-likelihood, broadcast over
    leading axes (used by batch scoring and Monte Carlo)."""
    return normalize_log(np.asarray(log_prior) + np.asarray(total_loglik), axis=-1)


def log_odds_of_set(log_steps: np.ndarray, cols: list[int]) -> np.ndarray:
    """Natural-log odds of the hypotheses ``cols`` together (a hypothesis group) against
    all the others at each step; for one column the same as :func:`log_odds_path`."""
    if len(cols) == 1:
        return log_odds_path(log_steps, cols[0])
    log_steps = np.atleast_2d(log_steps)
    mask = np.zeros(log_steps.shape[1], dtype=bool)
    mask[cols] = True
    if mask.all():
        return np.full(log_steps.shape[0], np.inf)
    with np.errstate(invalid="ignore"):
        return (log_normalizer(log_steps[:, mask], axis=1)
                - log_normalizer(log_steps[:, ~mask], axis=1))


def log_odds_path(log_steps: np.ndarray, j: int) -> np.ndarray:
    """Natural-log odds of hypothesis ``j`` against all the others at each step.

    ``log_steps`` holds normalized log probabilities (steps x hypotheses). The
    "rest" is the mixture of the other hypotheses weighted by their current
    probabilities, so the change between two steps is the log Bayes factor of
    that step's evidence for ``j`` against the rest.
    """
    log_steps = np.atleast_2d(log_steps)
    others = np.delete(log_steps, j, axis=1)
    if others.shape[1] == 0:
        return np.full(log_steps.shape[0], np.inf)
    with np.errstate(invalid="ignore"):
        return log_steps[:, j] - log_normalizer(others, axis=1)
