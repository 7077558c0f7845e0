"""Monte Carlo propagation of the inputs' uncertainty to the posterior.

:func:`simulate` draws only what moves the posterior: the priors (a
Dirichlet, as normalized Gamma draws) and, for each hypothesis, the total
log-likelihood of the observed states. By default the independent uncertain
entries of one hypothesis are drawn together from the exact distribution of
their sum (:class:`LogBetaSum`), so the cost per draw does not grow with the
number of evidence items; ``method="direct"`` draws every entry instead.
The inputs' distributions are the case's uncertainty section (see
:mod:`beliefledger.uncertainty`).

References
----------
Gelman, A. et al. (2013). *Bayesian Data Analysis*, 3rd ed., section 3.4 and
appendix A (Dirichlet marginals are Beta; a Dirichlet draw is a normalized
vector of independent Gamma draws).
"""

from __future__ import annotations

import math
import os
import time
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import check_draws, check_level
from ._logmath import log_of
from .calls import ANALYSIS_MIMETYPE, Call
from .errors import CaseError
from .uncertainty import current_uncertainty

if TYPE_CHECKING:
    from .case import Case

METHODS = ("auto", "direct")
DEFAULT_CHUNK = 16_384
"""Draws per chunk: fixed, so a seed reproduces the same draws on every machine."""
MAX_SAMPLE_CELLS = 200_000_000
PROGRESS_AFTER = 1.0
"""Seconds: an automatic progress bar appears when a run is expected to take longer."""


class LogBetaSum:
    """The exact distribution of ``S = sum_e log B_e`` for independent
    ``B_e ~ Beta(a_e, b_e)``, tabulated for inverse-CDF sampling.

    The characteristic function of ``log B`` is known in closed form,
    ``E[exp(i t log B)] = B(a + i t, b) / B(a, b)``, so that of the sum is
    the product over the terms. Its Fourier series on a window holding all
    but ``TAIL`` of the mass (found with Chernoff bounds from the cumulant
    generating function) is integrated term by term into the CDF, evaluated
    on a fine grid by one FFT. Checks: the tabulated CDF must be monotone and
    reproduce the exact mean and variance (digamma / trigamma sums); when a
    check fails, :attr:`ok` is false and the caller draws the terms directly.

    References
    ----------
    Abate, J. & Whitt, W. (1992). The Fourier-series method for inverting
    transforms of probability distributions. *Queueing Systems* 10, 5-87.
    Johnson, N. L., Kotz, S. & Balakrishnan, N. (1995). *Continuous Univariate
    Distributions*, vol. 2, 2nd ed., chapter 25 (moments of the Beta
    distribution, E[B^s] = B(a + s, b) / B(a, b)).
    """

    TAIL = 1e-14
    MAX_HARMONICS = 8192
    POINTS_PER_SD = 512
    MAX_GRID = 1 << 20

    def __init__(self, a: np.ndarray, b: np.ndarray) -> None:
        from scipy import special

        a = np.asarray(a, dtype=float)
        b = np.asarray(b, dtype=float)
        ab = a + b
        self.mean = float(np.sum(special.digamma(a) - special.digamma(ab)))
        self.var = float(np.sum(special.polygamma(1, a) - special.polygamma(1, ab)))
        sd = math.sqrt(max(self.var, 0.0))
        self.ok = False
        self.reason = ""
        if not sd > 0:
            self.reason = "no spread"
            return
        const = special.gammaln(ab) - special.gammaln(a)

        def cgf(sv: np.ndarray) -> np.ndarray:  # log E[exp(s S)], s > -min(a)
            sv = np.asarray(sv, dtype=float)[:, None]
            return np.sum(special.gammaln(a + sv) - special.gammaln(ab + sv) + const, axis=1)

        log_eps = math.log(self.TAIL)
        s_lo = float(a.min()) * np.array([0.01, 0.03, 0.1, 0.2, 0.35, 0.5, 0.65, 0.8, 0.9,
                                          0.97, 0.995])
        lo = float(np.max((log_eps - cgf(-s_lo)) / s_lo))
        s_hi = np.geomspace(1e-3, 1e4, 80) / sd
        hi = min(0.0, float(np.min((cgf(s_hi) - log_eps) / s_hi)))
        period = hi - lo
        if not (np.isfinite(period) and period > 0):
            self.reason = "no window"
            return

        def log_cf(t: np.ndarray) -> np.ndarray:
            z = 1j * np.asarray(t, dtype=float)[:, None]
            return np.sum(special.loggamma(a + z) - special.loggamma(ab + z) + const, axis=1)

        m = 32
        while m < self.MAX_HARMONICS and np.real(log_cf(np.array([2 * math.pi * m / period]))[0]
                                                  ) > math.log(1e-13):
            m *= 2
        if np.real(log_cf(np.array([2 * math.pi * m / period]))[0]) > math.log(1e-13):
            self.reason = "slowly decaying characteristic function"
            return
        k = np.arange(1, m + 1)
        t = 2 * math.pi * k / period
        w = np.exp(log_cf(t) - 1j * t * lo) / (-1j * t)
        # at least POINTS_PER_SD grid points per standard deviation (linear
        # interpolation between them is then good to about 1e-7 in probability)
        g = 1 << max(12, math.ceil(math.log2(max(4 * m, self.POINTS_PER_SD * period / sd))))
        if g > self.MAX_GRID:
            self.reason = "grid too fine"
            return
        padded = np.zeros(g, dtype=complex)
        padded[1:m + 1] = w
        series = np.fft.fft(padded)[: g]
        cdf = np.arange(g) / g + (2 / period) * np.real(series - w.sum())
        cdf = np.append(cdf, 1.0)
        x = lo + period * np.arange(g + 1) / g
        if np.min(np.diff(cdf)) < -1e-9 or cdf.min() < -1e-9 or cdf.max() > 1 + 1e-9:
            self.reason = "tabulated CDF not monotone"
            return
        cdf = np.maximum.accumulate(np.clip(cdf, 0.0, 1.0))
        dp = np.diff(cdf)
        mid = (x[:-1] + x[1:]) / 2
        mean = float(np.sum(mid * dp))
        var = float(np.sum((mid - mean) ** 2 * dp)) - (period / g) ** 2 / 12
        if abs(mean - self.mean) > 1e-4 * sd or abs(var / self.var - 1) > 1e-3:
            self.reason = "tabulated moments off"
            return
        self.x, self.cdf = x, cdf
        self.harmonics = m
        # quantile table on a uniform grid of probabilities, for O(1) look-ups in the body
        self._q = np.interp(np.linspace(0.0, 1.0, self.QUANTILES + 1), cdf, x)
        self._dq = np.diff(self._q)
        self.ok = True

    QUANTILES = 65_536
    BODY = 1e-3
    """Draws with u below BODY or above 1 - BODY are inverted on the full grid."""

    def draw(self, u: np.ndarray) -> np.ndarray:
        """Values of S at the uniform draws ``u`` (inverse CDF, linear between grid points)."""
        pos = u * self.QUANTILES
        i = pos.astype(np.intp)
        np.minimum(i, self.QUANTILES - 1, out=i)
        out = self._q[i] + (pos - i) * self._dq[i]
        tails = (u < self.BODY) | (u > 1 - self.BODY)
        if tails.any():
            out[tails] = np.interp(u[tails], self.cdf, self.x)
        return out


class _Plan:
    """What one simulation draws: the prior's Dirichlet parameters (or fixed log
    priors) and, per observed item, Beta marginals of the observed entries."""

    def __init__(self, case: Case, scenario: str, method: str = "sum") -> None:
        sec = current_uncertainty(case)
        self.hypotheses = case.hypothesis_names
        k = len(self.hypotheses)
        pri = case.scenario_priors(scenario).to_numpy(dtype=float)
        total = pri.sum()
        if total <= 0:
            raise CaseError(f"all priors of scenario '{scenario}' are zero; nothing to simulate")
        pri = pri / total
        self.log_prior = log_of(pri)
        self.prior_alpha: np.ndarray | None = None
        self.inputs: list[str] = []
        self.notes: list[str] = []
        p = sec.get("prior")
        if p is not None:
            if p["kind"] == "dirichlet":
                self.prior_alpha = np.array([p["alpha"][h] for h in self.hypotheses])
            else:
                self.prior_alpha = p["concentration"] * pri
            self.inputs.append("priors")
            a0 = self.prior_alpha.sum()
            for j, h in enumerate(self.hypotheses):
                mean = self.prior_alpha[j] / a0
                sd = math.sqrt(mean * (1 - mean) / (a0 + 1))
                if abs(mean - pri[j]) > max(sd, 1e-12):
                    self.notes.append(
                        f"the prior distribution of '{h}' has mean {mean:.4g} but scenario "
                        f"'{scenario}' uses {pri[j]:.4g} (more than one standard deviation, "
                        f"{sd:.2g}, apart); the draws are centred on the distribution")
        by_key = {(e["evidence"], e["hypothesis"]): e for e in sec["likelihoods"]}
        const = np.zeros(k)
        # cells: (a, b, column indices) of the Beta marginal of the observed entry
        cells: list[tuple[float, float, list[int]]] = []
        evidence = case.evidence
        for name, _members, lik in case.observed_steps(scenario):
            ev = evidence[name]
            if ev.uncertain is not None:
                if any(e == name for e, _ in by_key):
                    raise CaseError(
                        f"evidence '{name}' is an uncertain observation "
                        f"({ev.uncertain.form} form), and the Monte Carlo draws the observed "
                        "entry of items seen for certain: the uncertainty on its likelihoods "
                        "cannot be drawn yet; clear it (bl.clear_uncertainty(case, evidence="
                        f"{name!r})) or observe a state")
                const += log_of(lik)
                self.notes.append(
                    f"the uncertain observation of '{name}' is held at its likelihood weights "
                    "in every draw" + (" (the weights equivalent to Jeffrey's rule under the "
                                       f"priors of scenario '{scenario}'; under drawn priors "
                                       "the rule would give slightly different weights)"
                                       if ev.uncertain.form == "probability" else ""))
                continue
            obs = ev.states.index(ev.observed)
            groups: dict[str, tuple[float, float, list[int]]] = {}
            for j, h in enumerate(self.hypotheses):
                e = by_key.get((name, h))
                if e is None:
                    const[j] += log_of(lik[j])
                    continue
                if e["kind"] == "dirichlet":
                    al = np.array([e["alpha"][s] for s in ev.states])
                    a, b = float(al[obs]), float(al.sum() - al[obs])
                    mean = a / (a + b)
                    sd = math.sqrt(a * b / ((a + b) ** 2 * (a + b + 1)))
                    if abs(mean - lik[j]) > sd:
                        self.notes.append(
                            f"the distribution of P({ev.observed} | {h}) for '{name}' has mean "
                            f"{mean:.4g} but the case uses {lik[j]:.4g} (more than one standard "
                            f"deviation, {sd:.2g}, apart); the draws are centred on the "
                            "distribution, the base posterior on the case's value")
                else:
                    m = float(ev.table[obs, j])
                    a, b = e["concentration"] * m, e["concentration"] * (1 - m)
                self.inputs.append(f"likelihood of '{name}' under '{h}'")
                if a == 0 or b == 0:  # a degenerate Beta: an exact 0 or 1 in every draw
                    const[j] += -np.inf if a == 0 else 0.0
                    continue
                if e["tie"] is not None:
                    if e["tie"] in groups:
                        groups[e["tie"]][2].append(j)
                    else:
                        groups[e["tie"]] = (a, b, [j])
                        cells.append(groups[e["tie"]])
                else:
                    cells.append((a, b, [j]))
        self.const = const
        self.cells = cells
        self.method = method
        self.sums: dict[int, LogBetaSum] = {}
        self.methods = {h: "fixed" for h in self.hypotheses}
        if method == "sum":
            by_col: dict[int, list[int]] = {}
            for i, (_a, _b, cols) in enumerate(cells):
                if len(cols) == 1:
                    by_col.setdefault(cols[0], []).append(i)
            moved: set[int] = set()
            for j, idx in by_col.items():
                sampler = LogBetaSum(np.array([cells[i][0] for i in idx]),
                                     np.array([cells[i][1] for i in idx]))
                if sampler.ok:
                    self.sums[j] = sampler
                    moved.update(idx)
            self.cells = [c for i, c in enumerate(cells) if i not in moved]
        for _a, _b, cols in self.cells:
            for j in cols:
                self.methods[self.hypotheses[j]] = "direct"
        for j in self.sums:
            self.methods[self.hypotheses[j]] = ("sum+direct"
                                                if self.methods[self.hypotheses[j]] == "direct"
                                                else "sum")

    @property
    def uncertain(self) -> bool:
        return self.prior_alpha is not None or bool(self.cells) or bool(self.sums)

    def run_chunk(self, n: int, seed: np.random.SeedSequence) -> np.ndarray:
        """Posterior probabilities of ``n`` draws (hypotheses x draws)."""
        rng = np.random.default_rng(seed)
        k = len(self.hypotheses)
        # hypotheses x draws, so each hypothesis' running sum is contiguous
        s = np.repeat(self.const[:, None], n, axis=1)
        g1, g2 = np.empty(n), np.empty(n)
        if self.sums:
            u = rng.random((len(self.sums), n))
            for r, (j, sampler) in enumerate(self.sums.items()):
                s[j] += sampler.draw(u[r])
        for a, b, cols in self.cells:
            rng.standard_gamma(a, out=g1)
            rng.standard_gamma(b, out=g2)
            np.add(g1, g2, out=g2)
            np.divide(g1, g2, out=g2)  # a Beta(a, b) draw of P(observed | H)
            with np.errstate(divide="ignore"):
                np.log(g2, out=g2)
            for j in cols:
                s[j] += g2
        if self.prior_alpha is None:
            s += self.log_prior[:, None]
        else:
            # a Dirichlet draw is g / sum(g); the sum cancels in the posterior
            g = np.zeros((k, n))
            for j, a in enumerate(self.prior_alpha):
                if a > 0:
                    rng.standard_gamma(a, out=g[j])
            with np.errstate(divide="ignore"):
                s += np.log(g)
        # normalize over hypotheses (axis 0) with one exp; a draw in which every
        # hypothesis is impossible (all -inf) gives NaN, as normalize_log does
        top = s.max(axis=0)
        s -= np.where(np.isfinite(top), top, 0.0)
        np.exp(s, out=s)
        with np.errstate(invalid="ignore"):
            s /= s.sum(axis=0)
        return s


def _argmax_rows(x: np.ndarray) -> np.ndarray:
    """``np.argmax(x, axis=1)`` (first maximum wins) in one pass per column,
    fast for the column-major sample arrays."""
    best = x[:, 0].copy()
    idx = np.zeros(len(x), dtype=np.intp)
    for j in range(1, x.shape[1]):
        col = x[:, j]
        better = col > best
        best[better] = col[better]
        idx[better] = j
    return idx


class SimulationResult:
    """Posterior samples from :func:`simulate` and their summaries.

    Attributes
    ----------
    samples : ndarray
        Posterior probabilities, one row per draw (draws x hypotheses;
        rows of NaN for draws in which the evidence is impossible under every
        hypothesis, counted in ``undefined``).
    base_posterior : Series
        The posterior with the inputs at their stated values.
    base_map : str
        Its MAP hypothesis (the conclusion).
    notes : list of str
        Inputs whose distribution is not centred on the value the case uses
        (e.g. counts that disagree with a typed likelihood).
    """

    def __init__(self, *, title: str, scenario: str, hypotheses: list[str], samples: np.ndarray,
                 base_posterior: pd.Series, base_map: str, seed: int, draws: int, level: float,
                 inputs: list[str], seconds: float,
                 methods: dict[str, str] | None = None,
                 notes: list[str] | None = None, call: Call | None = None) -> None:
        self.title = title
        self.scenario = scenario
        self.hypotheses = hypotheses
        samples.setflags(write=False)
        self.samples = samples
        self.base_posterior = base_posterior
        self.base_map = base_map
        self.seed = seed
        self.draws = draws
        self.level = level
        self.inputs = inputs
        self.seconds = seconds
        self.methods = dict(methods or {})
        self.notes = list(notes or [])
        self.call = call
        """The settings that redo this run (:class:`beliefledger.calls.Call`)."""
        defined = ~np.isnan(samples[:, 0])
        self.undefined = int(np.sum(~defined))
        ok = samples if self.undefined == 0 else samples[defined]
        self._ok = ok
        self._frame: pd.DataFrame | None = None
        if len(ok):
            winners = _argmax_rows(ok)
            share = np.bincount(winners, minlength=len(hypotheses)) / len(ok)
        else:
            share = np.full(len(hypotheses), np.nan)
        self.map_probability = pd.Series(share, index=hypotheses, name="p_map")

    @property
    def changed_share(self) -> float:
        """Share of (defined) draws whose MAP differs from the base MAP."""
        return float(1 - self.map_probability[self.base_map])

    def interval(self, level: float | None = None) -> pd.DataFrame:
        """Equal-tailed interval of each hypothesis' posterior over the draws."""
        lv = self.level if level is None else check_level(level)
        lo, hi = (1 - lv) / 2, (1 + lv) / 2
        if not len(self._ok):
            q = np.full((2, len(self.hypotheses)), np.nan)
        else:
            q = np.quantile(self._ok, [lo, hi], axis=0)
        return pd.DataFrame({"low": q[0], "high": q[1]}, index=self.hypotheses)

    def to_frame(self) -> pd.DataFrame:
        """One row per hypothesis: ``base`` posterior, ``mean``, ``median``, ``low``,
        ``high`` (the ``level`` interval) and ``p_map``."""
        if self._frame is None:
            kk = len(self.hypotheses)
            if len(self._ok):
                lo, hi = (1 - self.level) / 2, (1 + self.level) / 2
                q = np.quantile(self._ok, [lo, 0.5, hi], axis=0)  # one sort for all three
                mean = self._ok.mean(axis=0)
            else:
                q, mean = np.full((3, kk), np.nan), np.full(kk, np.nan)
            self._frame = pd.DataFrame({"base": self.base_posterior.to_numpy(), "mean": mean,
                                        "median": q[1], "low": q[0], "high": q[2],
                                        "p_map": self.map_probability.to_numpy()},
                                       index=pd.Index(self.hypotheses, name="hypothesis"))
        return self._frame.copy()

    @property
    def summary(self) -> str:
        if not self.inputs:
            return (f"no input carries uncertainty, so every draw gives the base posterior; "
                    f"the MAP is '{self.base_map}'")
        p = float(self.map_probability[self.base_map])
        text = (f"'{self.base_map}' is the MAP in {p:.1%} of {self.draws - self.undefined:,} "
                f"draws; the conclusion changes in {self.changed_share:.1%}")
        if self.undefined:
            text += f" ({self.undefined:,} draws undefined: evidence impossible under every "
            text += "hypothesis)"
        return text

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready summary (no samples, no timing) for records."""
        frame = self.to_frame()
        return {"title": self.title, "scenario": self.scenario, "draws": self.draws,
                "seed": self.seed, "level": self.level, "base_map": self.base_map,
                "changed_share": self.changed_share, "undefined": self.undefined,
                "inputs": list(self.inputs), "methods": dict(self.methods),
                "notes": list(self.notes),
                "hypotheses": {h: {c: (None if np.isnan(v) else float(v))
                                   for c, v in row.items()} for h, row in frame.iterrows()},
                "summary": self.summary}

    def __repr__(self) -> str:
        return (f"SimulationResult({self.title!r}: {self.draws:,} draws, seed {self.seed}, "
                f"{len(self.inputs)} uncertain inputs; {self.summary})")

    def _repr_html_(self) -> str:
        from .display import simulation_html

        return simulation_html(self)

    def _repr_mimebundle_(self, include=None, exclude=None) -> dict[str, Any]:
        # the HTML and text forms come from the methods above; this adds the settings
        # a record reuses (seed, draws ...), see beliefledger.calls
        return {ANALYSIS_MIMETYPE: self.call.bundle()} if self.call is not None else {}


def _seed(seed: Any) -> int:
    if seed is None:
        return int(np.random.SeedSequence().entropy % (2**63))
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise CaseError(f"seed must be a non-negative whole number (or None for a fresh one), "
                        f"got {seed!r:.40}")
    return int(seed)


def _workers(workers: Any) -> int:
    if workers is None:
        return max(1, min(4, os.cpu_count() or 1))
    if isinstance(workers, bool) or not isinstance(workers, int | np.integer) or workers < 1:
        raise CaseError(f"workers must be a whole number of at least 1, got {workers!r:.40}")
    return int(workers)


def simulate(case: Case, draws: int = 100_000, seed: int | None = None, *, level: float = 0.9,
             scenario: str | None = None, progress: bool | None = None,
             chunk: int = DEFAULT_CHUNK, workers: int | None = None,
             method: str = "auto") -> SimulationResult:
    """Propagate the uncertainty on the inputs to the posterior by Monte Carlo.

    Each draw takes the priors from their Dirichlet (when set) and each
    uncertain likelihood from its Dirichlet, whose marginal for the observed
    state is a Beta; only observed entries affect the posterior, so only they
    are drawn. Work is vectorised over the draws (chunks of ``chunk`` draws,
    each with its own child of ``numpy.random.SeedSequence(seed)``), so the
    same seed, draws and chunk give the same result on any machine.

    Parameters
    ----------
    draws : int
        Number of draws (at least 1).
    seed : int or None
        Seed; ``None`` picks a fresh one, recorded in the result.
    level : float
        Level of the reported intervals, in (0, 1).
    scenario : str, optional
        Prior scenario (default: the active one).
    progress : bool or None
        Show a progress bar; ``None`` shows one when the run is expected to
        take longer than a second.
    chunk : int
        Draws per chunk (part of what the seed reproduces; keep the default).
    workers : int, optional
        Threads drawing chunks in parallel (default: up to 4, at most the
        number of CPUs); the result is the same for any number.
    method : {'auto', 'direct'}
        ``'direct'`` draws every uncertain likelihood of every draw (two
        Gamma variates each). ``'auto'`` (default) draws, for each
        hypothesis, the total log-likelihood of its independent uncertain
        entries at once from its exact distribution (:class:`LogBetaSum`,
        checked on construction; a hypothesis whose check fails is drawn
        directly); the draws follow the same distribution, at a cost that
        does not grow with the number of evidence items. Tied entries and
        the priors are always drawn directly. ``result.methods`` says which
        way each hypothesis was drawn.

    Returns
    -------
    SimulationResult

    References
    ----------
    Gelman et al. (2013), *Bayesian Data Analysis*, 3rd ed., appendix A
    (Dirichlet draws from Gamma draws).
    """
    from .engine import update

    n = check_draws(draws)
    lv = check_level(level)
    chunk = check_draws(chunk)
    sd = _seed(seed)
    sc = case.active_scenario if scenario is None else scenario
    if sc not in case.scenario_names:
        raise CaseError(f"no scenario named {sc!r}; the scenarios are {case.scenario_names}")
    ledger = update(case, scenario=sc, with_flags=False)
    if ledger.stopped_at is not None:
        raise CaseError(f"evidence '{ledger.stopped_at}' is impossible under every hypothesis "
                        "still in play, so the posterior is undefined; fix its likelihoods "
                        "before simulating")
    if method not in METHODS:
        raise CaseError(f"method {method!r:.40} is not known; use one of {list(METHODS)}")
    plan = _Plan(case, sc, "direct" if method == "direct" else "sum")
    k = len(plan.hypotheses)
    if n * k > MAX_SAMPLE_CELLS:
        raise CaseError(f"{n:,} draws x {k} hypotheses would hold {n * k:,} numbers (limit "
                        f"{MAX_SAMPLE_CELLS:,}); use fewer draws")
    n_chunks = -(-n // chunk)
    children = np.random.SeedSequence(sd).spawn(n_chunks)
    out = np.empty((k, n))  # hypotheses x draws; the result holds its transpose
    nw = _workers(workers)

    def fill(c: int) -> int:
        lo, hi = c * chunk, min(n, (c + 1) * chunk)
        out[:, lo:hi] = plan.run_chunk(hi - lo, children[c])
        return hi - lo

    t0 = time.perf_counter()
    done = fill(0)
    bar = None
    if n_chunks > 1 and progress is not False:
        expected = (time.perf_counter() - t0) * n_chunks / min(nw, n_chunks - 1)
        if progress or expected > PROGRESS_AFTER:
            from tqdm.auto import tqdm

            bar = tqdm(total=n, initial=done, unit="draw", desc="simulate", leave=False)
    try:
        if nw == 1 or n_chunks <= 2:
            for c in range(1, n_chunks):
                m = fill(c)
                if bar is not None:
                    bar.update(m)
        else:
            from concurrent.futures import ThreadPoolExecutor, as_completed

            # numpy's generators release the GIL, so chunks run in parallel;
            # each chunk has its own seed, so the result does not depend on nw
            with ThreadPoolExecutor(max_workers=nw) as pool:
                for fut in as_completed([pool.submit(fill, c) for c in range(1, n_chunks)]):
                    m = fut.result()
                    if bar is not None:
                        bar.update(m)
    finally:
        if bar is not None:
            bar.close()
    return SimulationResult(title=case.title, scenario=sc, hypotheses=plan.hypotheses,
                            methods=plan.methods, notes=plan.notes,
                            samples=out.T, base_posterior=ledger.posterior,
                            base_map=ledger.map_hypothesis, seed=sd, draws=n, level=lv,
                            inputs=plan.inputs, seconds=time.perf_counter() - t0,
                            call=Call.of("simulate", case, {
                                "draws": n, "seed": sd, "level": lv, "scenario": sc,
                                "chunk": chunk, "method": method}))


__all__ = ["simulate", "SimulationResult", "LogBetaSum", "DEFAULT_CHUNK", "METHODS"]
