"""Dirichlet, Beta and Gamma estimates: fitted distributions and their summaries.

An estimate holds the distribution fitted from data (see :mod:`beliefledger.elicit`),
its mean, exact equal-tailed intervals (``scipy.stats``, imported inside the
methods so that ``import beliefledger`` stays fast), draws, a ready-to-use form
for the case, the :class:`~beliefledger.case.Source` filled in from the data
and the method, and any :class:`~beliefledger.flags.Flag` the fit raises.
Uncertainty sections (:mod:`beliefledger.uncertainty`) take them as input.

References
----------
Gelman, A. et al. (2013). *Bayesian Data Analysis*, 3rd ed., section 3.4 and
appendix A (the Dirichlet and its Beta marginals; Gamma draws).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import check_draws, check_level, check_positive, fmt_g, rng_from
from .case import Source
from .flags import Flag

if TYPE_CHECKING:
    from .case import Case

DEFAULT_LEVEL = 0.9


def tails(level: float) -> tuple[float, float]:
    """The lower and upper tail probabilities of an equal-tailed ``level`` interval."""
    level = check_level(level)
    return (1 - level) / 2, (1 + level) / 2


class DirichletEstimate:
    """A Dirichlet distribution over mutually exclusive categories (hypotheses).

    Attributes
    ----------
    alpha : Series
        Dirichlet parameters, ``count + pseudo`` per category.
    counts : Series
        The observed counts.
    pseudo : float
        The pseudo-count added to every category.
    source : Source
        Filled in from the counts, the pseudo-count and the method.
    flags : list of Flag
    """

    def __init__(self, alpha: pd.Series, counts: pd.Series, pseudo: float, source: Source,
                 flags: list[Flag]) -> None:
        self.alpha = alpha.astype(float).rename("alpha")
        self.counts = counts.rename("count")
        self.pseudo = float(pseudo)
        self.source = source
        self.flags = list(flags)

    @property
    def concentration(self) -> float:
        """Sum of the parameters (the prior's weight in equivalent observations)."""
        return float(self.alpha.sum())

    @property
    def mean(self) -> pd.Series:
        """Expected probability of each category, ``alpha_i / sum(alpha)``."""
        return (self.alpha / self.alpha.sum()).rename("mean")

    def interval(self, level: float = DEFAULT_LEVEL) -> pd.DataFrame:
        """Equal-tailed interval of each category's probability from its exact marginal,
        ``Beta(alpha_i, sum(alpha) - alpha_i)``; columns ``low``, ``high``."""
        from scipy import stats

        lo, hi = tails(level)
        a = self.alpha.to_numpy()
        b = a.sum() - a
        return pd.DataFrame({"low": stats.beta.ppf(lo, a, b), "high": stats.beta.ppf(hi, a, b)},
                            index=self.alpha.index)

    def sample(self, n: int, rng: Any = None) -> pd.DataFrame:
        """``n`` draws of the probability vector (rows sum to 1)."""
        n = check_draws(n)
        x = rng_from(rng).dirichlet(self.alpha.to_numpy(), size=n)
        return pd.DataFrame(x, columns=self.alpha.index)

    def priors(self) -> dict[str, float]:
        """The mean as ``{hypothesis: prior}`` for ``Case(...)`` or ``case.set_priors``."""
        m = self.mean
        return {str(k): float(v) for k, v in m.items()}

    def add_scenario(self, case: Case, name: str, *, note: str = "",
                     replace_existing: bool = False) -> None:
        """Add the mean as prior scenario ``name`` of ``case``, with this estimate's
        source (e.g. ``"plant history"``), declared as taken from data (the
        ``scenario-stale`` flag says when the hypothesis set moves on). The counts
        must name the case's hypotheses."""
        case.add_scenario(name, self.priors(), source=self.source, note=note,
                          replace_existing=replace_existing, meaning="data")

    def to_dict(self) -> dict[str, Any]:
        return {"distribution": "dirichlet",
                "alpha": {str(k): float(v) for k, v in self.alpha.items()},
                "counts": {str(k): int(v) for k, v in self.counts.items()},
                "pseudo": self.pseudo, "source": self.source.to_dict(),
                "flags": [f.to_dict() for f in self.flags]}

    def __repr__(self) -> str:
        return (f"DirichletEstimate({len(self.alpha)} categories, {int(self.counts.sum())} "
                f"counts, pseudo-count {fmt_g(self.pseudo)}, concentration {fmt_g(self.concentration)})")



class BetaEstimate:
    """A Beta distribution for a probability (a failure-on-demand probability, a
    test's sensitivity ...), posterior of a binomial count under a Beta prior.

    Attributes
    ----------
    a, b : float
        Posterior parameters.
    prior_a, prior_b : float
        The prior's parameters; ``successes`` and ``trials`` the data.
    """

    def __init__(self, a: float, b: float, prior_a: float, prior_b: float, successes: int,
                 trials: int, prior_label: str, source: Source, flags: list[Flag],
                 what: str = "probability") -> None:
        self.a, self.b = float(a), float(b)
        self.prior_a, self.prior_b = float(prior_a), float(prior_b)
        self.successes, self.trials = int(successes), int(trials)
        self.prior_label = prior_label
        self.source = source
        self.flags = list(flags)
        self.what = what

    @property
    def mean(self) -> float:
        return self.a / (self.a + self.b)

    @property
    def sd(self) -> float:
        s = self.a + self.b
        return math.sqrt(self.a * self.b / (s * s * (s + 1)))

    def quantile(self, q: Any) -> Any:
        from scipy import stats

        return stats.beta.ppf(q, self.a, self.b)

    def interval(self, level: float = DEFAULT_LEVEL) -> tuple[float, float]:
        """Equal-tailed interval ``(low, high)`` of the probability."""
        lo, hi = tails(level)
        return float(self.quantile(lo)), float(self.quantile(hi))

    def sample(self, n: int, rng: Any = None) -> np.ndarray:
        return rng_from(rng).beta(self.a, self.b, size=check_draws(n))

    def to_dict(self) -> dict[str, Any]:
        return {"distribution": "beta", "a": self.a, "b": self.b, "prior": [self.prior_a,
                self.prior_b], "prior_label": self.prior_label, "successes": self.successes,
                "trials": self.trials, "mean": self.mean, "source": self.source.to_dict(),
                "flags": [f.to_dict() for f in self.flags]}

    def __repr__(self) -> str:
        return (f"BetaEstimate({self.what}: Beta({fmt_g(self.a)}, {fmt_g(self.b)}), mean "
                f"{self.mean:.4g}, from {self.successes} in {self.trials})")



class GammaEstimate:
    """A Gamma distribution for an event rate (events per unit of exposure).

    Attributes
    ----------
    shape, rate : float
        Posterior parameters (``rate`` in units of exposure).
    """

    def __init__(self, shape: float, rate: float, prior_shape: float, prior_rate: float,
                 events: int, exposure: float, unit: str, prior_label: str, source: Source,
                 flags: list[Flag]) -> None:
        self.shape, self.rate = float(shape), float(rate)
        self.prior_shape, self.prior_rate = float(prior_shape), float(prior_rate)
        self.events, self.exposure = int(events), float(exposure)
        self.unit = unit
        self.prior_label = prior_label
        self.source = source
        self.flags = list(flags)

    @property
    def mean(self) -> float:
        """Expected rate, ``shape / rate`` (events per unit of exposure)."""
        return self.shape / self.rate

    def quantile(self, q: Any) -> Any:
        from scipy import stats

        return stats.gamma.ppf(q, self.shape, scale=1.0 / self.rate)

    def interval(self, level: float = DEFAULT_LEVEL) -> tuple[float, float]:
        lo, hi = tails(level)
        return float(self.quantile(lo)), float(self.quantile(hi))

    def probability_of_event(self, duration: float) -> float:
        """Posterior-predictive probability of at least one event in ``duration``
        (same unit as the exposure): ``1 - (rate / (rate + duration)) ** shape``.

        The number of events in ``duration`` is negative binomial under the
        Gamma posterior; the chance of none is ``(rate / (rate + t)) ** shape``.
        """
        t = check_positive("duration", duration, allow_zero=True)
        return float(-math.expm1(self.shape * (math.log(self.rate) - math.log(self.rate + t))))

    def sample(self, n: int, rng: Any = None) -> np.ndarray:
        return rng_from(rng).gamma(self.shape, 1.0 / self.rate, size=check_draws(n))

    def to_dict(self) -> dict[str, Any]:
        return {"distribution": "gamma", "shape": self.shape, "rate": self.rate,
                "prior": [self.prior_shape, self.prior_rate], "prior_label": self.prior_label,
                "events": self.events, "exposure": self.exposure, "unit": self.unit,
                "mean": self.mean, "source": self.source.to_dict(),
                "flags": [f.to_dict() for f in self.flags]}

    def __repr__(self) -> str:
        per = f" per {self.unit}" if self.unit else ""
        return (f"GammaEstimate(rate: Gamma({fmt_g(self.shape)}, {fmt_g(self.rate)}), mean "
                f"{self.mean:.4g}{per}, from {self.events} in {fmt_g(self.exposure)})")



__all__ = ["DirichletEstimate", "BetaEstimate", "GammaEstimate", "tails", "DEFAULT_LEVEL"]
