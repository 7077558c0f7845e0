"""Batch scoring against the engine row by row, a published worked example, and bad input.

The random models and observation tables below are invented test data, seeded.
"""

from __future__ import annotations

import doctest
import math
import os
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger import batch
from beliefledger.batch import RESULT_COLUMNS, UNKNOWN_COLUMN, default_threads, score_rows
from beliefledger.engine import update

# --------------------------------------------------------------------------- fixtures


def random_model(rng: np.random.Generator, n_hyps: int = 5, n_items: int = 7,
                 zero_share: float = 0.2) -> bl.Case:
    """A random coherent model with exact zeros (eliminations, impossible rows) and one
    likelihood evidence item."""
    pri = rng.dirichlet(np.ones(n_hyps))
    pri[rng.integers(n_hyps)] = 0.0  # one zero prior
    pri = pri / pri.sum()
    hyps = [f"H{i}" for i in range(n_hyps - 1)] + ["Other"]
    case = bl.Case("random model", hypotheses=dict(zip(hyps, map(float, pri), strict=True)),
                   normalize=True)
    for k in range(n_items - 1):
        n_states = int(rng.integers(2, 5))
        t = rng.dirichlet(np.ones(n_states), size=n_hyps).T
        t[rng.random(t.shape) < zero_share] = 0.0
        for j in range(n_hyps):  # keep each column a distribution
            if t[:, j].sum() == 0:
                t[rng.integers(n_states), j] = 1.0
        t = t / t.sum(axis=0)
        states = [f"s{k}{i}" for i in range(n_states)]
        case.add_evidence(f"item {k}", states=states,
                          likelihoods={h: list(t[:, j]) for j, h in enumerate(hyps)})
    lv = rng.random(n_hyps)
    lv[rng.integers(n_hyps)] = 0.0
    case.add_evidence("logbook entry", likelihood_evidence=True, observed="entry found",
                      likelihoods={h: float(v) for h, v in zip(hyps, lv, strict=True)})
    return case


def random_rows(rng: np.random.Generator, case: bl.Case, n: int,
                        missing: float = 0.3) -> pd.DataFrame:
    data = {}
    for name, ev in case.evidence.items():
        vals = np.array(ev.states, dtype=object)[rng.integers(len(ev.states), size=n)]
        vals[rng.random(n) < missing] = None
        data[name] = vals
    return pd.DataFrame(data, index=pd.Index([f"alarm-{i:04d}" for i in range(n)], name="id"))


def engine_row(model: bl.Case, row: pd.Series, work: bl.Case | None = None):
    """The reference: the same model, this row's observations, the sequential engine.
    ``work``: a copy of the model to reuse (every item's observation is set anew)."""
    case = model.copy() if work is None else work
    for name in case.evidence_names:
        v = row.get(name)
        case.observe(name, None if v is None or (isinstance(v, float) and math.isnan(v)) else v)
    return update(case, with_flags=False)


@pytest.fixture
def model(rng) -> bl.Case:
    return random_model(rng)


@pytest.fixture
def rows(rng, model) -> pd.DataFrame:
    return random_rows(rng, model, 400)


# --------------------------------------------------------------------------- the engine, row by row


def test_rows_equal_engine_on_seeded_sample(model, rows, rng):
    result = score_rows(model, rows)
    assert list(result.index) == list(rows.index)
    hyps = model.hypothesis_names
    assert list(result.columns) == [*hyps, *RESULT_COLUMNS]
    assert result["impossible"].any() and (~result["impossible"]).any()  # both kinds present
    assert (result["eliminated"] > 0).any()
    sample = rng.choice(len(rows), size=150, replace=False)
    work = model.copy()
    for i in sample:
        ledger = engine_row(model, rows.iloc[i], work)
        got = result.iloc[i]
        np.testing.assert_allclose(got[hyps].to_numpy(dtype=float), ledger.posterior.to_numpy(),
                                   rtol=1e-12, atol=1e-300)
        # exact zeros stay exact zeros
        assert ((got[hyps].to_numpy(dtype=float) == 0) == (ledger.posterior.to_numpy() == 0)).all()
        assert got["map"] == ledger.map_hypothesis
        top = float(ledger.posterior[ledger.map_hypothesis])
        assert got["map_probability"] == pytest.approx(top, rel=1e-12)
        assert got["weak_map"] == (top < 0.5)
        assert got["impossible"] == (ledger.stopped_at is not None)
        stopped = None if pd.isna(got["stopped_at"]) else got["stopped_at"]
        assert stopped == ledger.stopped_at
        assert got["eliminated"] == len(ledger.eliminated)
        assert got["n_observed"] == int(rows.iloc[i].notna().sum())
        assert got["log_evidence"] == pytest.approx(ledger.log_evidence, rel=1e-12, abs=1e-12)


@given(st.integers(0, 2**32 - 1))
def test_generated_models_match_the_engine_on_every_row(seed):
    rng = np.random.default_rng(seed)
    model = random_model(rng, n_hyps=int(rng.integers(2, 6)), n_items=int(rng.integers(2, 6)),
                         zero_share=float(rng.uniform(0, 0.5)))
    rows = random_rows(rng, model, 12, missing=float(rng.uniform(0, 0.6)))
    result = score_rows(model, rows, chunk_size=int(rng.integers(1, 13)))
    hyps = model.hypothesis_names
    work = model.copy()
    for i in range(len(rows)):
        ledger = engine_row(model, rows.iloc[i], work)
        got = result.iloc[i]
        np.testing.assert_allclose(got[hyps].to_numpy(dtype=float), ledger.posterior.to_numpy(),
                                   rtol=1e-11, atol=1e-300)
        assert got["map"] == ledger.map_hypothesis
        assert got["map_probability"] == pytest.approx(
            float(ledger.posterior[ledger.map_hypothesis]), rel=1e-11)
        assert (None if pd.isna(got["stopped_at"]) else got["stopped_at"]) == ledger.stopped_at
        assert got["eliminated"] == len(ledger.eliminated)


def test_posteriors_are_finite_distributions(model, rows):
    result = score_rows(model, rows)
    post = result[model.hypothesis_names].to_numpy()
    assert np.isfinite(post).all()
    np.testing.assert_allclose(post.sum(axis=1), 1.0, rtol=1e-12)
    assert np.isfinite(result["log_evidence"]).all()
    # a hypothesis with a zero prior never gains belief (Cromwell's rule)
    zero = [h for h, p in model.priors.items() if p == 0]
    assert zero and (result[zero].to_numpy() == 0).all()


def test_active_scenario_priors_are_used(model, rows):
    hyps = model.hypothesis_names
    alt = dict.fromkeys(hyps, 1 / len(hyps))
    model.add_scenario("uniform", alt)
    base = score_rows(model, rows)
    model.use_scenario("uniform")
    scored = score_rows(model, rows)
    assert not np.allclose(base[hyps].to_numpy(), scored[hyps].to_numpy())
    for i in (0, 17, 333):
        ledger = engine_row(model, rows.iloc[i])
        assert ledger.scenario == "uniform"
        np.testing.assert_allclose(scored.iloc[i][hyps].to_numpy(dtype=float),
                                   ledger.posterior.to_numpy(), rtol=1e-12, atol=1e-300)


def test_model_case_own_observations_are_ignored(model, rows):
    before = score_rows(model, rows)
    for name, ev in model.evidence.items():
        if not ev.likelihood_evidence:
            model.observe(name, ev.states[0])
    pd.testing.assert_frame_equal(score_rows(model, rows), before, check_exact=True)


@pytest.mark.parametrize("chunk_size", [1, 7, 64, 10_000])
def test_chunk_size_does_not_change_results(model, rows, chunk_size):
    ref = score_rows(model, rows, weak_below=0.6)
    assert ref["weak_map"].any() and not ref["weak_map"].all()
    assert ref["eliminated"].any() and ref["impossible"].any()
    pd.testing.assert_frame_equal(score_rows(model, rows, chunk_size=chunk_size, weak_below=0.6),
                                  ref, check_exact=True)


@pytest.fixture
def pools(monkeypatch) -> list[int]:
    """The max_workers of every thread pool score_rows starts."""
    started: list[int] = []
    real = batch.ThreadPoolExecutor

    def recording(max_workers: int) -> ThreadPoolExecutor:
        started.append(max_workers)
        return real(max_workers=max_workers)

    monkeypatch.setattr(batch, "ThreadPoolExecutor", recording)
    return started


@pytest.mark.parametrize("threads", [1, 2, 3])
def test_threads_do_not_change_results(model, rows, threads, pools):
    ref = score_rows(model, rows, chunk_size=50, threads=1, weak_below=0.6)
    assert ref["weak_map"].any() and not ref["weak_map"].all()
    got = score_rows(model, rows, chunk_size=50, threads=threads, weak_below=0.6)
    pd.testing.assert_frame_equal(got, ref, check_exact=True)
    assert pools == ([] if threads == 1 else [threads])  # an explicit number is used as given


def test_explicit_threads_win_and_default_threads_decides_otherwise(model, rows, pools,
                                                                    monkeypatch):
    score_rows(model, rows, chunk_size=50)  # 400 rows x 5 hypotheses: small, one thread
    assert pools == []
    score_rows(model, rows, chunk_size=150, threads=4)  # three chunks: three workers at most
    assert pools == [3]
    asked = []

    def fake(n_rows: int, n_hyps: int, chunk: int) -> int:
        asked.append((n_rows, n_hyps, chunk))
        return 2

    monkeypatch.setattr(batch, "default_threads", fake)
    score_rows(model, rows, chunk_size=50)
    assert asked == [(400, 5, 50)] and pools == [3, 2]
    score_rows(model, rows)
    assert asked[-1] == (400, 5, batch._default_chunk(5))
    score_rows(model, rows, chunk_size=50, threads=1)
    assert len(asked) == 2 and pools == [3, 2]  # not asked: the explicit number wins


def fake_machine(monkeypatch, cpus: int | None, load: float | None, *, affinity: bool = True,
                 total: int = 64) -> None:
    """Pretend this process may run on ``cpus`` of ``total`` CPUs under ``load``; None:
    the platform does not say."""
    if affinity and cpus is not None:
        monkeypatch.setattr(os, "sched_getaffinity", lambda pid: set(range(cpus)),
                            raising=False)
        monkeypatch.setattr(os, "cpu_count", lambda: total)
    else:
        monkeypatch.delattr(os, "sched_getaffinity", raising=False)
        monkeypatch.setattr(os, "cpu_count", lambda: cpus)
    if load is None:
        monkeypatch.delattr(os, "getloadavg", raising=False)
    else:
        monkeypatch.setattr(os, "getloadavg", lambda: (load, load, load), raising=False)


BIG = dict(n_rows=1_000_000, n_hyps=10, chunk=50_000)  # 20 chunks


@pytest.mark.parametrize(("cpus", "load", "expected"), [
    (2, 0.0, 2),    # an idle 2-CPU machine
    (2, 0.3, 2),    # a little background noise: a CPU at least half free counts
    (2, 0.64, 1),   # busy: a second thread would only compete with the others
    (2, 1.5, 1),
    (2, 7.0, 1),    # overloaded: never below 1
    (8, 0.2, 4),    # capped at 4
    (8, 5.6, 2),
    (1, 0.0, 1),
])
def test_default_threads_from_the_cpus_this_process_has(monkeypatch, cpus, load, expected):
    fake_machine(monkeypatch, cpus, load)
    assert default_threads(**BIG) == expected


def test_default_threads_reads_the_affinity_mask_not_the_machine(monkeypatch):
    fake_machine(monkeypatch, 1, 0.0, total=64)  # pinned to one CPU of 64
    assert default_threads(**BIG) == 1
    fake_machine(monkeypatch, 3, 0.0, total=64)
    assert default_threads(**BIG) == 3


def test_default_threads_without_affinity_or_load_average(monkeypatch):
    fake_machine(monkeypatch, 6, None, affinity=False)  # e.g. macOS: cpu_count, no mask
    assert default_threads(**BIG) == 4
    fake_machine(monkeypatch, 6, 3.0, affinity=False)
    assert default_threads(**BIG) == 3
    fake_machine(monkeypatch, None, None, affinity=False)  # cpu_count() unknown
    assert default_threads(**BIG) == 1

    def no_load() -> tuple[float, float, float]:
        raise OSError("load average unobtainable")

    fake_machine(monkeypatch, 2, 0.0)
    monkeypatch.setattr(os, "getloadavg", no_load)
    assert default_threads(**BIG) == 2


def test_default_threads_small_work_and_few_chunks(monkeypatch):
    fake_machine(monkeypatch, 8, 0.0)
    cells = batch._THREAD_MIN_CELLS
    assert default_threads(n_rows=cells // 8 - 1, n_hyps=8, chunk=100) == 1  # small
    assert default_threads(n_rows=cells // 8, n_hyps=8, chunk=100) == 4
    assert default_threads(n_rows=cells, n_hyps=1, chunk=cells // 2) == 2  # two chunks
    assert default_threads(n_rows=cells, n_hyps=1, chunk=cells) == 1  # one chunk
    monkeypatch.setattr(batch, "_THREAD_MIN_CELLS", 0)
    assert default_threads(n_rows=10, n_hyps=2, chunk=3) == 4


def test_first_bad_row_is_reported_whatever_the_threads(model, rows):
    frame = rows.copy()
    frame.loc["alarm-0390", "item 0"] = "late typo"
    frame.loc["alarm-0061", "item 5"] = "early typo"
    for threads in (1, 2, 4):
        with pytest.raises(bl.CaseError, match=r"row 'alarm-0061', column 'item 5'"):
            score_rows(model, frame, chunk_size=16, threads=threads)


def test_column_dtypes_and_order_do_not_change_results(model, rows):
    ref = score_rows(model, rows)
    as_cat = rows.copy()
    for name, ev in model.evidence.items():
        # categories in another order than the states, plus one never used
        as_cat[name] = pd.Categorical(rows[name], categories=[*reversed(ev.states), "unused"])
    pd.testing.assert_frame_equal(score_rows(model, as_cat), ref, check_exact=True)
    as_str = rows.astype("string")
    pd.testing.assert_frame_equal(score_rows(model, as_str), ref, check_exact=True)
    shuffled = rows[list(reversed(rows.columns))]
    pd.testing.assert_frame_equal(score_rows(model, shuffled), ref, check_exact=True)


def test_subset_of_columns_means_not_observed(model, rows):
    keep = rows.columns[:3]
    sub = score_rows(model, rows[keep])
    full = rows.copy()
    full[rows.columns[3:]] = None
    pd.testing.assert_frame_equal(sub, score_rows(model, full), check_exact=True)


def test_map_probability_and_weak_map_flag_the_fleet(model, rows):
    ref = score_rows(model, rows)
    post = ref[model.hypothesis_names].to_numpy()
    assert ref["map_probability"].dtype == np.float64 and ref["weak_map"].dtype == bool
    assert (ref["map_probability"].to_numpy() == post.max(axis=1)).all()  # exactly, not nearly
    assert (ref["weak_map"] == (ref["map_probability"] < 0.5)).all()
    for threshold in (0.25, 0.6, 0.9, 1, np.float32(0.75)):
        got = score_rows(model, rows, weak_below=threshold)
        assert (got["weak_map"] == (got["map_probability"] < threshold)).all()
        # the threshold moves the flag only
        pd.testing.assert_frame_equal(got.drop(columns="weak_map"), ref.drop(columns="weak_map"),
                                      check_exact=True)
    certain = score_rows(model, rows, weak_below=1.0)
    assert (certain["weak_map"] == (certain["map_probability"] < 1.0)).all()
    assert not certain["weak_map"].all()  # rows where every rival is eliminated are not weak


def test_coin_rows_are_weak_until_the_evidence_decides():
    rows = pd.DataFrame({"toss 1": [None, "heads", "tails"], "toss 2": [None, "heads", None]})
    got = score_rows(coin_model(), rows)
    # prior 0.75 fair; two heads: 0.75/4 / (0.75/4 + 0.25) = 3/7 fair, 4/7 two-headed
    assert list(got["map_probability"]) == pytest.approx([0.75, 4 / 7, 1.0], rel=1e-12)
    assert list(got["weak_map"]) == [False, False, False]
    assert list(score_rows(coin_model(), rows, weak_below=0.8)["weak_map"]) == [True, True, False]


@pytest.mark.parametrize("threads", [1, 2])
def test_eliminated_count_is_skipped_only_when_no_likelihood_is_zero(rng, monkeypatch, threads):
    case = random_model(rng, zero_share=0.0)  # zeros only in the likelihood evidence item
    frame = random_rows(rng, case, 400, missing=0.1)
    zero_free = frame.drop(columns="logbook entry")
    compiled = batch.compile_model(case)
    at = batch._check_columns
    assert not batch._any_zero_likelihood(compiled, at(compiled, zero_free.columns))
    assert batch._any_zero_likelihood(compiled, at(compiled, frame.columns))
    skipped = score_rows(case, zero_free, chunk_size=64, threads=threads)
    with_zero = score_rows(case, frame, chunk_size=64, threads=threads)
    assert (with_zero["eliminated"] > 0).any()  # the item with a zero is still counted
    monkeypatch.setattr(batch, "_SKIP_ZERO_FREE_COUNT", False)
    pd.testing.assert_frame_equal(score_rows(case, zero_free, chunk_size=64, threads=threads),
                                  skipped, check_exact=True)
    pd.testing.assert_frame_equal(score_rows(case, frame, chunk_size=64, threads=threads),
                                  with_zero, check_exact=True)
    assert (skipped["eliminated"] == 0).all() and not skipped["impossible"].any()
    work = case.copy()
    for i in rng.choice(len(frame), size=25, replace=False):
        ledger = engine_row(case, zero_free.iloc[i], work)
        assert skipped.iloc[i]["eliminated"] == len(ledger.eliminated) == 0


def test_all_missing_row_returns_the_prior(model):
    frame = pd.DataFrame({name: [None, None] for name in model.evidence_names})
    result = score_rows(model, frame)
    np.testing.assert_allclose(result[model.hypothesis_names].to_numpy(),
                               np.tile(model.priors.to_numpy(), (2, 1)), rtol=1e-15)
    assert (result["n_observed"] == 0).all() and (result["log_evidence"] == 0).all()


# --------------------------------------------------------------------------- worked examples


def coin_model() -> bl.Case:
    case = bl.Case("coin", hypotheses={"fair": 0.75, "two-headed": 0.25}, exhaustive=True)
    for k in range(5):
        case.add_evidence(f"toss {k + 1}", states=["heads", "tails"],
                          likelihoods={"fair": [0.5, 0.5], "two-headed": [1.0, 0.0]})
    return case


def test_nasa_coin_example_in_batch():
    # NASA/SP-2009-569 (Dezfuli et al. 2009), section 2.2, Table 1: fair vs two-headed
    # coin, priors 0.75 / 0.25. One head: P(D) = 0.625, posterior 0.60 / 0.40. Five heads:
    # exact P(fair) = 0.75/32 / (0.75/32 + 0.25) = 0.0857142857 ("about 10:1" against).
    rows = pd.DataFrame([["heads"] * k + [None] * (5 - k) for k in range(6)],
                        columns=[f"toss {k + 1}" for k in range(5)])
    result = score_rows(coin_model(), rows)
    assert result.loc[1, "fair"] == pytest.approx(0.60, abs=5e-3)
    assert math.exp(result.loc[1, "log_evidence"]) == pytest.approx(0.625, abs=5e-4)
    assert result.loc[5, "fair"] == pytest.approx(0.0857142857, rel=1e-9)
    assert list(result["map"]) == ["fair", "fair", "two-headed", "two-headed", "two-headed",
                                   "two-headed"]
    assert result["fair"].is_monotonic_decreasing


def test_one_tail_eliminates_the_two_headed_coin():
    # common practice: a zero likelihood rules a hypothesis out exactly
    rows = pd.DataFrame({"toss 1": ["heads"], "toss 2": ["tails"]})
    got = score_rows(coin_model(), rows).iloc[0]
    assert got["two-headed"] == 0.0 and got["fair"] == 1.0
    assert got["eliminated"] == 1 and not got["impossible"]


def test_impossible_row_is_flagged_and_stops_like_the_engine():
    case = bl.Case("valve", hypotheses={"seal": 0.6, "Other": 0.4})
    case.add_evidence("residue", states=["oily", "dry"],
                      likelihoods={"seal": [1.0, 0.0], "Other": [0.3, 0.7]})
    case.add_evidence("pressure", states=["dropping", "steady"],
                      likelihoods={"seal": [0.9, 0.1], "Other": [0.0, 1.0]})
    case.add_evidence("sound", states=["hiss", "none"],
                      likelihoods={"seal": [0.5, 0.5], "Other": [0.2, 0.8]})
    rows = pd.DataFrame({"residue": ["dry", "oily"], "sound": ["hiss", "hiss"],
                         "pressure": ["dropping", "dropping"]}, index=["A", "B"])
    result = score_rows(case, rows)
    a = result.loc["A"]
    assert a["impossible"] and a["stopped_at"] == "pressure"
    # residue 'dry' leaves only Other; 'pressure: dropping' is impossible under it, so the
    # update stops before it and 'sound' (after it in the model's order) is not applied
    assert a["Other"] == 1.0 and a["seal"] == 0.0 and a["map"] == "Other"
    assert a["log_evidence"] == pytest.approx(math.log(0.4 * 0.7))
    ledger = engine_row(case, rows.loc["A"])
    assert ledger.stopped_at == "pressure" and ledger.posterior["Other"] == 1.0
    b = result.loc["B"]
    assert not b["impossible"] and pd.isna(b["stopped_at"]) and b["map"] == "seal"
    assert not result[["seal", "Other", "log_evidence"]].isna().any().any()


def test_module_examples_run():
    failures, tried = doctest.testmod(batch, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert tried > 0 and failures == 0


# --------------------------------------------------------------------------- bad input


def test_non_dataframe_is_refused(model, rows):
    for bad in (rows.to_dict(), rows.to_numpy(), rows.iloc[0], None, "table.csv"):
        with pytest.raises(bl.CaseTypeError, match="pandas DataFrame"):
            score_rows(model, bad)
    with pytest.raises(bl.CaseTypeError, match="Case as the model"):
        score_rows({"H1": 0.5}, rows)


def test_empty_frame_is_refused(model, rows):
    with pytest.raises(bl.CaseError, match="no rows"):
        score_rows(model, rows.iloc[:0])
    with pytest.raises(bl.CaseError, match="no columns"):
        score_rows(model, pd.DataFrame(index=range(3)))


def test_unknown_column_is_named(model, rows):
    frame = rows.assign(**{"alarm id": 1})
    with pytest.raises(bl.CaseError, match=r"column 'alarm id' .* not an evidence item"):
        score_rows(model, frame)
    frame = rows.rename(columns={"item 2": "Item 2 "})
    with pytest.raises(bl.CaseError, match=r"did you mean 'item 2'"):
        score_rows(model, frame)
    frame = rows.copy()
    frame.columns = [*rows.columns[:-1], 7]
    with pytest.raises(bl.CaseError, match=r"column 7 of the observation rows"):
        score_rows(model, frame)


def test_unknown_state_label_names_row_column_and_value(model, rows):
    frame = rows.copy()
    frame.loc["alarm-0123", "item 1"] = "s1-typo"
    with pytest.raises(bl.CaseError, match=r"row 'alarm-0123', column 'item 1': 's1-typo' is "
                                           r"not a state of evidence 'item 1'"):
        score_rows(model, frame)
    as_cat = frame.astype({"item 1": "category"})
    with pytest.raises(bl.CaseError, match=r"row 'alarm-0123', column 'item 1': 's1-typo'"):
        score_rows(model, as_cat, chunk_size=50)


def gauge_model(level_states: tuple[str, ...] = ("0", "1", "2")) -> bl.Case:
    """Integer-coded states (a level 0-2, a crew shift 1-2, a signed offset) beside a text
    item; numbers invented."""
    case = bl.Case("gauge", hypotheses={"drift": 0.2, "leak": 0.3, "Other": 0.5})
    n = len(level_states)
    case.add_evidence("level", states=list(level_states),
                      likelihoods={"drift": list(np.linspace(1, 2, n) / np.linspace(1, 2, n).sum()),
                                   "leak": [1 / n] * n, "Other": [0.0] + [1 / (n - 1)] * (n - 1)})
    case.add_evidence("shift", states=["1", "2"],
                      likelihoods={"drift": [0.7, 0.3], "leak": [0.4, 0.6], "Other": [0.5, 0.5]})
    case.add_evidence("offset", states=["-1", "0", "1"],
                      likelihoods={"drift": [0.1, 0.2, 0.7], "leak": [0.6, 0.3, 0.1],
                                   "Other": [0.2, 0.6, 0.2]})
    case.add_evidence("zone", states=["north", "south"],
                      likelihoods={"drift": [0.5, 0.5], "leak": [0.8, 0.2], "Other": [0.5, 0.5]})
    return case


def gauge_rows(rng: np.random.Generator, n: int = 300) -> pd.DataFrame:
    """Whole numbers with gaps as pandas reads them (float64, NaN for missing)."""
    def coded(lo: int, hi: int) -> np.ndarray:
        x = rng.integers(lo, hi + 1, size=n).astype(float)
        x[rng.random(n) < 0.25] = np.nan
        return x
    zone = np.array(["north", "south"], dtype=object)[rng.integers(2, size=n)]
    return pd.DataFrame({"level": coded(0, 2), "shift": coded(1, 2), "offset": coded(-1, 1),
                         "zone": zone}, index=pd.RangeIndex(100, 100 + n, name="alarm"))


def as_labels(frame: pd.DataFrame) -> pd.DataFrame:
    """The reference: the same rows with the numbers written as state labels."""
    return frame.apply(lambda c: c.map(lambda v: v if isinstance(v, str) or pd.isna(v)
                                       else str(int(v)), na_action="ignore"))


def test_integer_coded_columns_score_like_their_labels(rng):
    case, frame = gauge_model(), gauge_rows(rng)
    ref = score_rows(case, as_labels(frame))
    assert ref["eliminated"].any() and ref["n_observed"].min() < ref["n_observed"].max()
    pd.testing.assert_frame_equal(score_rows(case, frame), ref, check_exact=True)
    whole = frame.fillna({"level": 0, "shift": 1, "offset": 0})
    ref_whole = score_rows(case, as_labels(whole))
    for dtype in ("int64", "int8", "int32"):
        got = score_rows(case, whole.astype({"level": dtype, "shift": dtype, "offset": dtype}))
        pd.testing.assert_frame_equal(got, ref_whole, check_exact=True)
    unsigned = whole.astype({"level": "uint8", "shift": "uint64"})
    pd.testing.assert_frame_equal(score_rows(case, unsigned), ref_whole, check_exact=True)
    nullable = frame.astype({"level": "Int64", "shift": "Int8", "offset": "Float64"})
    pd.testing.assert_frame_equal(score_rows(case, nullable, chunk_size=37), ref,
                                  check_exact=True)


def test_integer_states_need_not_start_at_zero_and_missing_numbers_are_not_observed():
    case = gauge_model(level_states=("1", "2", "3"))
    frame = pd.DataFrame({"level": [1.0, np.nan, 3.0], "shift": [np.nan, 2.0, 1.0]})
    got = score_rows(case, frame)
    pd.testing.assert_frame_equal(got, score_rows(case, as_labels(frame)), check_exact=True)
    assert list(got["n_observed"]) == [1, 1, 2]


def test_integer_categories_take_the_fast_categorical_path(rng):
    case, frame = gauge_model(), gauge_rows(rng)
    ref = score_rows(case, frame)
    cat = frame.astype("category")  # int-valued float categories (1.0, 2.0) from the gaps
    assert cat["shift"].cat.categories.dtype == np.float64
    as_int = cat.copy()
    as_int["level"] = frame["level"].fillna(-7).astype(int).astype("category") \
        .cat.remove_categories([-7])  # int64 categories; -7 missing again
    assert as_int["level"].cat.categories.dtype == np.int64
    for got in (cat, as_int):
        pd.testing.assert_frame_equal(score_rows(case, got, chunk_size=50), ref,
                                      check_exact=True)
    coder = batch._Coder("level", ("0", "1", "2"), as_int["level"])
    assert coder.codes is not None  # categories mapped once, through their text
    assert list(coder.lut) == [0, 1, 2, 3]  # the last entry: missing, not observed


def test_two_spellings_of_one_number_are_refused_by_value():
    case = gauge_model(level_states=("1", "01", "2"))
    with pytest.raises(bl.CaseError, match=r"row 1, column 'level': 1 could be state '1' or "
                                           r"'01'.*two states spell 1: rename the states.*"
                                           r"\.map\(\{1: '01'\}\)"):
        score_rows(case, pd.DataFrame({"level": [2, 1, 2]}))
    with pytest.raises(bl.CaseError, match=r"row 1, column 'level': 1 could be"):
        score_rows(case, pd.DataFrame({"level": pd.Categorical([2, 1])}))
    with pytest.raises(bl.CaseError, match=r"could be state '1' or '01'"):  # skip is no way out
        score_rows(case, pd.DataFrame({"level": [1.0, np.nan]}), on_unknown="skip")
    ok = score_rows(case, pd.DataFrame({"level": [2, 2]}))  # 2 has one spelling
    pd.testing.assert_frame_equal(ok, score_rows(case, pd.DataFrame({"level": ["2", "2"]})),
                                  check_exact=True)


def test_a_non_whole_number_is_refused():
    case = gauge_model()
    frame = pd.DataFrame({"level": [0.0, np.nan, 1.5], "shift": [1.0, 2.0, 2.0]},
                         index=["a", "b", "c"])
    with pytest.raises(bl.CaseError, match=r"row 'c', column 'level': 1.5 is not a whole number;"
                                           r".* its states are \['0', '1', '2'\]; fix the "
                                           r"value, or leave it empty \(NaN\) for not "
                                           r"observed$"):
        score_rows(case, frame)
    with pytest.raises(bl.CaseError, match=r"row 'c', column 'level': 1.5 is not a whole"):
        score_rows(case, frame, on_unknown="skip")
    with pytest.raises(bl.CaseError, match=r"row 'b', column 'level': inf is not a whole"):
        score_rows(case, pd.DataFrame({"level": [0.0, np.inf]}, index=["a", "b"]))
    with pytest.raises(bl.CaseError, match=r"row 1, column 'level': 1.5 is not a whole"):
        score_rows(case, pd.DataFrame({"level": pd.Categorical([0.0, 1.5])}))
    # states written as decimal text: the hint says how to turn the numbers into labels
    dec = bl.Case("dose", hypotheses={"over": 0.5, "Other": 0.5})
    dec.add_evidence("dose", states=["0.5", "1.5"],
                     likelihoods={"over": [0.2, 0.8], "Other": [0.7, 0.3]})
    with pytest.raises(bl.CaseError, match=r"1.5 is not a whole number.*convert it with "
                                           r"\.astype\('string'\), which keeps missing"):
        score_rows(dec, pd.DataFrame({"dose": [1.5, np.nan]}))
    fixed = score_rows(dec, pd.DataFrame({"dose": [1.5, np.nan]}).astype("string"))
    assert list(fixed["n_observed"]) == [1, 0] and fixed["over"].iloc[0] > 0.5


def test_a_number_that_is_no_state_is_unknown():
    case = gauge_model()
    frame = pd.DataFrame({"level": [0, 7, 1]}, index=["a", "b", "c"])
    with pytest.raises(bl.CaseError, match=r"row 'b', column 'level': 7 is not a state of "
                                           r"evidence 'level' \(a number is read as the state "
                                           r"that spells it: 7 as '7', not a state\); its "
                                           r"states are \['0', '1', '2'\]"):
        score_rows(case, frame)
    with pytest.raises(bl.CaseError, match=r"row 'b', column 'level': 7.0 is not a state"):
        score_rows(case, frame.astype(float))
    with pytest.raises(bl.CaseError, match=r"row 'b', column 'level': 7 is not a state"):
        score_rows(case, frame.astype("category"))
    with pytest.raises(bl.CaseError, match=r"column 'zone': 3 is not a state.*'north'"):
        score_rows(case, pd.DataFrame({"zone": [3]}))  # a text item: every number unknown
    skipped = score_rows(case, frame, on_unknown="skip")
    assert list(skipped[UNKNOWN_COLUMN]) == [0, 1, 0]
    cleaned = frame.astype(float).where(frame != 7)
    pd.testing.assert_frame_equal(skipped.drop(columns=UNKNOWN_COLUMN),
                                  score_rows(case, cleaned), check_exact=True)


@pytest.mark.parametrize("states", [("-1", "0", "2"), ("-40000", "0", "40000", "90000")],
                         ids=["table", "binary search"])
def test_numbers_outside_the_states_are_unknown_at_every_range(states):
    case = bl.Case("span", hypotheses={"A": 0.4, "B": 0.6})
    n = len(states)
    case.add_evidence("code", states=list(states),
                      likelihoods={"A": list(np.arange(1, n + 1) / np.arange(1, n + 1).sum()),
                                   "B": [1 / n] * n})
    big = np.iinfo(np.int64)
    values = [int(s) for s in states] + [int(states[0]) - 1, int(states[-1]) + 1, 1, big.min,
                                         big.max]
    frame = pd.DataFrame({"code": values})
    got = score_rows(case, frame, on_unknown="skip")
    assert list(got[UNKNOWN_COLUMN]) == [0] * n + [1] * 5
    labels = pd.DataFrame({"code": list(states) + [None] * 5})
    pd.testing.assert_frame_equal(got.drop(columns=UNKNOWN_COLUMN), score_rows(case, labels),
                                  check_exact=True)
    huge = pd.DataFrame({"code": np.array([2**64 - 1, 2**63, 0], dtype=np.uint64)})
    assert list(score_rows(case, huge, on_unknown="skip")[UNKNOWN_COLUMN]) == [1, 1, 0]
    with pytest.raises(bl.CaseError, match=r"row 0, column 'code': 1e\+30 is not a state"):
        score_rows(case, pd.DataFrame({"code": [1e30]}))


def test_padded_state_names_get_a_hint():
    case = gauge_model(level_states=("00", "01", "02"))
    with pytest.raises(bl.CaseError, match=r"row 0, column 'level': 1 is not a state.*the "
                                           r"states spell it '01': rename the states to plain "
                                           r"numbers, or map.*\.map\(\{1: '01'\}\)"):
        score_rows(case, pd.DataFrame({"level": [1, 2]}))


def test_labels_held_as_other_values_get_a_hint():
    case = bl.Case("valve", hypotheses={"stuck": 0.2, "Other": 0.8})
    case.add_evidence("closed", states=["True", "False"],
                      likelihoods={"stuck": [0.9, 0.1], "Other": [0.4, 0.6]})
    flags = pd.DataFrame({"closed": pd.Categorical([True, False, None])})
    with pytest.raises(bl.CaseError, match=r"row 0, column 'closed': True is not a state.*the "
                                           r"categories are bool values, not text: rename them "
                                           r"with \.cat\.rename_categories\(str\), which "
                                           r"keeps the fast categorical path"):
        score_rows(case, flags)
    fixed = flags.apply(lambda c: c.cat.rename_categories(str))
    ref = score_rows(case, pd.DataFrame({"closed": ["True", "False", None]}))
    pd.testing.assert_frame_equal(score_rows(case, fixed), ref, check_exact=True)
    held = pd.DataFrame({"closed": pd.Series([True, False, None], dtype=object)})
    with pytest.raises(bl.CaseError, match=r"the column holds object values, not text: convert "
                                           r"it with \.astype\('string'\)"):
        score_rows(case, held)
    pd.testing.assert_frame_equal(score_rows(case, held.astype("string")), ref, check_exact=True)


def test_skip_unknown_counts_every_skipped_label(model, rows):
    frame = rows.copy()
    frame.loc["alarm-0005", "item 0"] = "bogus"
    frame.loc["alarm-0005", "item 3"] = "bogus too"
    frame.loc["alarm-0009", "item 3"] = "bogus"
    result = score_rows(model, frame, on_unknown="skip")
    assert list(result.columns)[-1] == UNKNOWN_COLUMN
    assert result[UNKNOWN_COLUMN].sum() == 3
    assert result.loc["alarm-0005", UNKNOWN_COLUMN] == 2
    cleaned = frame.copy()
    cleaned.loc["alarm-0005", ["item 0", "item 3"]] = None
    cleaned.loc["alarm-0009", "item 3"] = None
    pd.testing.assert_frame_equal(result.drop(columns=UNKNOWN_COLUMN),
                                  score_rows(model, cleaned), check_exact=True)


def test_bad_options_are_refused(model, rows):
    with pytest.raises(bl.CaseError, match="on_unknown is 'ignore'"):
        score_rows(model, rows, on_unknown="ignore")
    with pytest.raises(bl.CaseError, match="chunk_size is 0"):
        score_rows(model, rows, chunk_size=0)
    with pytest.raises(bl.CaseTypeError, match="chunk_size"):
        score_rows(model, rows, chunk_size=True)
    with pytest.raises(bl.CaseTypeError, match="chunk_size"):
        score_rows(model, rows, chunk_size=2.5)
    with pytest.raises(bl.CaseError, match="threads is 0"):
        score_rows(model, rows, threads=0)
    with pytest.raises(bl.CaseTypeError, match="threads"):
        score_rows(model, rows, threads="2")
    with pytest.raises(bl.CaseTypeError, match="prefix"):
        score_rows(model, rows, prefix=3)
    for bad in (0, 0.0, -0.1, 1.5, float("nan"), float("inf")):
        with pytest.raises(bl.CaseError, match=r"weak_below is .*; give a probability above 0 "
                                               r"and at most 1 \(default 0\.5\)"):
            score_rows(model, rows, weak_below=bad)
    for bad in ("0.5", True, None, [0.5]):
        with pytest.raises(bl.CaseTypeError, match=r"weak_below must be a probability in "
                                                   r"\(0, 1\], got"):
            score_rows(model, rows, weak_below=bad)


def test_incoherent_model_is_refused_and_left_unchanged(model, rows):
    model.set_prior("H0", 0.9)  # part-way edit: priors no longer sum to 1
    snapshot = model.to_dict()
    with pytest.raises(bl.CaseError, match=r"priors of scenario 'base' sum to .* not 1"):
        score_rows(model, rows)
    assert model.to_dict() == snapshot
    fresh = coin_model()
    fresh.set_likelihood("toss 3", "fair", 0.7, state="heads")
    with pytest.raises(bl.CaseError, match=r"evidence 'toss 3' for hypothesis 'fair' sum to 1.2"):
        score_rows(fresh, pd.DataFrame({"toss 1": ["heads"]}))


def test_hypothesis_named_like_a_result_column_needs_a_prefix():
    case = bl.Case("names", hypotheses={"map": 0.5, "Other": 0.5})
    case.add_evidence("e", states=["a", "b"], likelihoods={"map": [0.9, 0.1], "Other": [0.5, 0.5]})
    frame = pd.DataFrame({"e": ["a"]})
    with pytest.raises(bl.CaseError, match=r"'map' would collide.*prefix='p_'"):
        score_rows(case, frame)
    got = score_rows(case, frame, prefix="p_")
    assert list(got.columns[:2]) == ["p_map", "p_Other"] and got["map"].iloc[0] == "map"


def test_dependent_evidence_is_refused_by_name():
    case = bl.Case("fire", hypotheses={"kitchen": 0.4, "wiring": 0.6}, exhaustive=True)
    case.add_evidence("first witness", states=["kitchen", "hall"],
                      likelihoods={"kitchen": [0.7, 0.3], "wiring": [0.4, 0.6]})
    case.add_conditional_evidence(
        "second witness", given="first witness", states=["kitchen", "hall"],
        likelihoods={"kitchen": {"kitchen": [0.9, 0.1], "wiring": [0.8, 0.2]},
                     "hall": {"kitchen": [0.3, 0.7], "wiring": [0.1, 0.9]}})
    case.add_evidence("smoke", states=["black", "white"],
                      likelihoods={"kitchen": [0.6, 0.4], "wiring": [0.8, 0.2]})
    case.add_evidence("scorch", states=["yes", "no"],
                      likelihoods={"kitchen": [0.5, 0.5], "wiring": [0.9, 0.1]})
    case.add_joint_group("same photo", ["smoke", "scorch"], correlation=0.2)
    case.add_evidence("breaker", states=["tripped", "on"],
                      likelihoods={"kitchen": [0.2, 0.8], "wiring": [0.7, 0.3]})
    with pytest.raises(bl.CaseError, match=r"column 'second witness' is evidence in a stated "
                                           r"dependence \(conditional chain"):
        score_rows(case, pd.DataFrame({"second witness": ["hall"]}))
    with pytest.raises(bl.CaseError, match=r"column 'scorch' .* \(joint group 'same photo'\)"):
        score_rows(case, pd.DataFrame({"scorch": ["yes"]}))
    with pytest.raises(bl.CaseError, match=r"column 'first witness' .* \(conditional chain"):
        score_rows(case, pd.DataFrame({"first witness": ["hall"], "breaker": ["on"]}))
    # the items outside any stated dependence are still scored
    frame = pd.DataFrame({"breaker": ["tripped"]})
    got = score_rows(case, frame).iloc[0]
    assert got["kitchen"] == pytest.approx(0.4 * 0.2 / (0.4 * 0.2 + 0.6 * 0.7), rel=1e-12)


def test_exported_at_top_level():
    assert bl.score_rows is score_rows


def test_rows_is_the_parameter_name(model, rows):
    pd.testing.assert_frame_equal(score_rows(model, rows=rows), score_rows(model, rows),
                                  check_exact=True)
    with pytest.raises(TypeError, match="observations"):
        score_rows(model, observations=rows)
    with pytest.raises(bl.CaseTypeError, match=r"^rows must be a pandas DataFrame of "
                                               r"observation rows"):
        score_rows(model, rows.to_numpy())


def test_pandas_scoring_loads_no_dask_and_no_notebook_packages():
    code = ("import sys, pandas as pd, beliefledger as bl\n"
            "m = bl.example_case()\n"
            "e = m.evidence_names[0]\n"
            "r = bl.score_rows(m, pd.DataFrame({e: [m.evidence[e].states[0], None]}))\n"
            "assert len(r) == 2\n"
            "print(sorted(x for x in ('dask', 'distributed', 'altair', 'ipywidgets', "
            "'nbformat', 'scipy.stats') if x in sys.modules))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"


# --------------------------------------------------------------------------- uncertain observations


def _report_model() -> bl.Case:
    model = bl.Case("Gauge checks (invented)", hypotheses={"sensor fault": 0.3,
                                                          "leak": 0.5, "other cause": 0.2})
    model.add_evidence("reading", states=["high", "normal", "low"],
                       likelihoods={"sensor fault": [0.5, 0.2, 0.3], "leak": [0.1, 0.3, 0.6],
                                    "other cause": [0.3, 0.4, 0.3]}, source="invented")
    model.add_evidence("hiss", states=["heard", "not heard"],
                       likelihoods={"sensor fault": [0.1, 0.9], "leak": [0.7, 0.3],
                                    "other cause": [0.2, 0.8]}, source="invented")
    return model


def test_a_column_of_weights_scores_each_row_as_virtual_evidence():
    model = _report_model()
    w1 = {"high": 0.1, "normal": 0.2, "low": 0.7}
    rows = pd.DataFrame({"reading": [w1, "low", None, pd.Series({"high": 3, "normal": 1,
                                                                   "low": 0}),
                                     {"high": 0, "normal": 0, "low": 1}],
                         "hiss": ["heard", None, "not heard", "heard", None]},
                        index=[f"check-{i}" for i in range(5)])
    got = score_rows(model, rows)
    for i, (r, h) in enumerate(zip(rows["reading"], rows["hiss"], strict=True)):
        case = model.copy()
        if isinstance(r, str):
            case.observe("reading", r)
        elif r is not None:
            case.observe("reading", likelihood=dict(r))
        if isinstance(h, str):
            case.observe("hiss", h)
        led = case.update()
        np.testing.assert_allclose(got.iloc[i, :3].to_numpy(dtype=float), led.posterior_values,
                                   rtol=1e-12)
        assert got.iloc[i]["log_evidence"] == pytest.approx(led.log_evidence, rel=1e-12)
    assert got["n_observed"].tolist() == [2, 1, 1, 2, 1]
    # weights {low: 1, others: 0} equal the label 'low'
    np.testing.assert_allclose(got.iloc[4, :3].to_numpy(dtype=float),
                               got.iloc[1, :3].to_numpy(dtype=float), rtol=1e-15)


def test_weights_frames_in_wide_form_equal_the_dict_column():
    model = _report_model()
    wide = pd.DataFrame({"high": [0.1, np.nan, 3.0], "normal": [0.2, np.nan, 1.0],
                         "low": [0.7, np.nan, 0.0]}, index=["a", "b", "c"])
    rows = pd.DataFrame({"hiss": ["heard", "not heard", None]}, index=wide.index)
    got = score_rows(model, rows, weights={"reading": wide})
    as_dicts = rows.assign(reading=[{"high": 0.1, "normal": 0.2, "low": 0.7}, None,
                                    {"high": 3.0, "normal": 1.0, "low": 0.0}])
    pd.testing.assert_frame_equal(got, score_rows(model, as_dicts), rtol=1e-13)


def test_bad_weights_are_refused_naming_the_row():
    model = _report_model()
    for cell, match in (({"high": -1, "normal": 1, "low": 1}, "0 or more"),
                        ({"high": 0, "normal": 0, "low": 0}, "not all 0"),
                        ({"high": 1, "normal": 1}, r"miss state\(s\) \['low'\]"),
                        ({"high": 1, "normal": 1, "low": 1, "odd": 1}, "unknown state"),
                        ("sideways", "nor a dict of likelihood weights")):
        rows = pd.DataFrame({"reading": [{"high": 1, "normal": 1, "low": 1}, cell]},
                            index=["ok", "bad"])
        with pytest.raises(bl.CaseError, match=match) as exc:
            score_rows(model, rows)
        assert "row 'bad'" in str(exc.value)
    rows = pd.DataFrame({"reading": [{"high": 1, "normal": 1, "low": 1}, "sideways"]})
    assert score_rows(model, rows, on_unknown="skip")[UNKNOWN_COLUMN].tolist() == [0, 1]
    wide = pd.DataFrame({"high": [1.0], "normal": [1.0]})
    with pytest.raises(bl.CaseError, match="one column per state"):
        score_rows(model, pd.DataFrame({"hiss": ["heard"]}), weights={"reading": wide})
    with pytest.raises(bl.CaseError, match="both a column"):
        score_rows(model, pd.DataFrame({"reading": ["low"]}),
                   weights={"reading": pd.DataFrame({"high": [1.0], "normal": [1.0],
                                                     "low": [1.0]})})


def test_weights_that_make_a_row_impossible_stop_it_like_the_engine():
    model = bl.Case("Stops (invented)", hypotheses={"A": 0.5, "B": 0.5}, exhaustive=True)
    model.add_evidence("first", states=["x", "y"], likelihoods={"A": [1.0, 0.0], "B": [0.0, 1.0]})
    model.add_evidence("second", states=["u", "v"], likelihoods={"A": [0.3, 0.7],
                                                                "B": [0.6, 0.4]})
    rows = pd.DataFrame({"first": ["x"], "second": [{"u": 1.0, "v": 0.0}]})
    model.add_evidence("third", states=["p", "q"], likelihoods={"A": [0.0, 1.0], "B": [1.0, 0.0]})
    rows["third"] = [{"p": 1.0, "q": 0.0}]
    got = score_rows(model, rows).iloc[0]
    case = model.copy()
    case.observe("first", "x")
    case.observe("second", likelihood={"u": 1.0, "v": 0.0})
    case.observe("third", likelihood={"p": 1.0, "q": 0.0})
    led = case.update()
    assert bool(got["impossible"]) and got["stopped_at"] == led.stopped_at == "third"
    np.testing.assert_allclose([got["A"], got["B"]], led.posterior_values)
