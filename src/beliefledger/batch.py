"""Batch scoring: one audited evidence model applied to many observation rows at once.

:func:`score_rows` takes a model :class:`~beliefledger.case.Case` (its
hypotheses, the priors of its active scenario and the likelihood table of
each evidence item) and a table of observation rows, one row per incident,
alarm or claim and one column per evidence item, and returns the posterior
of every row. (A case, in beliefledger, is an investigation; the rows are
the many things scored against one case's model.)

How: each item's natural-log likelihood table is extended with two count
columns (observed, unknown label) and neighbouring items are bundled into
small combined tables (the outer sum of their tables, one row per joint
state). A chunk of rows is then scored with one gather by joint-state code
and one add per bundle, and one log-sum-exp per row; no Python code runs per
row. Chunks are scored on a few threads (numpy releases the GIL), and the
working memory beyond the result itself is a few chunks' worth, however many
rows there are. A Dask DataFrame is scored partition by partition
(``map_partitions``) and gives a Dask DataFrame back.

The result equals :func:`beliefledger.engine.update` run on each row alone
(the tests check this on a seeded random sample), including the two
boundary rules the engine defines:

- an observed state with likelihood exactly 0 under a hypothesis eliminates
  it (posterior exactly 0, counted in ``eliminated``);
- a row whose evidence is impossible under every hypothesis still in play is
  flagged ``impossible``; as in the engine, its update stops before the first
  impossible item (named in ``stopped_at``) and its posterior is the one just
  before that item, never NaN.

Only numpy and pandas are imported here; this module never imports dask (a
Dask DataFrame brings it along; ``pip install 'beliefledger[dask]'``).
"""

from __future__ import annotations

import os
import re
import threading
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import key_gaps
from ._logmath import log_normalizer, log_of
from .case import SUM_TOL
from .errors import CaseError, CaseTypeError

if TYPE_CHECKING:
    from .case import Case

RESULT_COLUMNS = ("map", "map_probability", "weak_map", "n_observed", "eliminated",
                  "impossible", "stopped_at", "log_evidence")
"""Columns of a :func:`score_rows` result after the posterior columns."""

UNKNOWN_COLUMN = "n_unknown"
"""Extra result column with ``on_unknown="skip"``: unknown labels skipped per row."""

_CHUNK_BYTES = 4 * 2**20  # size of one chunk's (rows x hypotheses) float64 accumulator
_THREAD_MIN_CELLS = 2**18  # below this many rows x hypotheses, threads cost more than they save
_MAX_THREADS = 4  # numpy's loops here are memory-bound: more threads than this gain little
_SKIP_ZERO_FREE_COUNT = True  # no zero likelihood in the scored items: eliminated is 0, uncounted


@dataclass(frozen=True)
class _Model:
    """A case reduced to plain arrays: picklable, cheap to ship to Dask workers."""

    hypotheses: tuple[str, ...]
    items: tuple[str, ...]
    states: tuple[tuple[str, ...], ...]
    # per item, (states + 2) x (hypotheses + 2): ln P(state | H) in the first columns,
    # then two count columns (observed, unknown label); row n_states is "not observed"
    # and row n_states + 1 an unknown label (zeros in the log part). Gathering rows and
    # adding them up gives the log-likelihoods and both counts in one pass.
    log_tables: tuple[np.ndarray, ...]
    log_prior: np.ndarray
    positive_prior: np.ndarray
    log_prior_total: float  # ln sum(prior) after rounding (about 0); log_evidence subtracts it
    scenario: str


def compile_model(case: Case) -> _Model:
    """Check ``case`` as a batch model and reduce it to arrays (see :func:`score_rows`)."""
    from .case import Case

    if not isinstance(case, Case):
        raise CaseTypeError(f"score_rows needs a beliefledger Case as the model, got "
                            f"{type(case).__name__}")
    hyps = tuple(case.hypothesis_names)
    p = case.priors.to_numpy(dtype=float)
    total = float(p.sum())
    if abs(total - 1) > SUM_TOL:
        raise CaseError(f"the priors of scenario '{case.active_scenario}' sum to {total:.6g}, "
                        "not 1; a batch model must be coherent: fix the priors (or call "
                        "case.normalize_priors(), recorded as an assumption) before scoring")
    items, states, tables = [], [], []
    for ev in case.evidence.values():
        t = ev.table
        if not ev.likelihood_evidence:
            sums = t.sum(axis=0)
            bad = np.flatnonzero(np.abs(sums - 1) > SUM_TOL)
            if bad.size:
                j = int(bad[0])
                raise CaseError(f"likelihoods of evidence '{ev.name}' for hypothesis "
                                f"'{hyps[j]}' sum to {sums[j]:.6g} over its states, not 1; fix "
                                "the column before scoring rows with this model")
        ns, nh = len(ev.states), len(hyps)
        lt = np.zeros((ns + 2, nh + 2))
        lt[:ns, :nh] = log_of(t)
        lt[:ns, nh] = 1.0
        lt[ns + 1, nh + 1] = 1.0
        lt.setflags(write=False)
        items.append(ev.name)
        states.append(tuple(ev.states))
        tables.append(lt)
    log_prior = log_of(p / total)
    log_prior.setflags(write=False)
    positive = p > 0
    positive.setflags(write=False)
    return _Model(hyps, tuple(items), tuple(states), tuple(tables), log_prior, positive,
                  float(log_normalizer(log_prior)), case.active_scenario)


def _check_count(name: str, value: Any, kind: str, fix: str) -> None:
    """An optional positive whole-number option (None means the default)."""
    if value is None:
        return
    if isinstance(value, bool) or not isinstance(value, int | np.integer):
        raise CaseTypeError(f"{name} {kind}, got {type(value).__name__} {value!r}")
    if value < 1:
        raise CaseError(f"{name} is {value}; {fix}")


def score_rows(case: Case, rows: Any, *, chunk_size: int | None = None,
               on_unknown: str = "raise", prefix: str = "", threads: int | None = None,
               weak_below: float = 0.5, weights: Any = None) -> Any:
    """Posterior of every observation row of a table, under one model case.

    Parameters
    ----------
    case : Case
        The model: its hypotheses, the priors of its active scenario and the
        likelihood table of each evidence item. The states the model case
        itself has observed are ignored; each row brings its own. The priors
        must sum to 1 and each likelihood column to 1 (likelihood evidence items
        excepted), else a :class:`~beliefledger.errors.CaseError` is raised.
    rows : pandas.DataFrame or dask.dataframe.DataFrame
        The observation rows: one row per incident, alarm or claim, one
        column per evidence item of the model (a subset is fine: a missing
        column means not observed in any row).
        Values are state labels of that item; missing values (NaN, None,
        ``pd.NA``) mean not observed. Categorical columns are fastest.

        Integer-coded states: an integer or float column (numpy or pandas
        nullable), or a categorical whose categories are numbers, is read as
        whole-number codes: the value ``v`` is the state spelled
        ``str(int(v))`` (states ``["0", "1", "2"]`` or ``["1", "2"]``), and
        NaN is not observed, so integers with gaps, which pandas keeps as
        float, need no conversion. A value that is not a whole number (1.5),
        or a number two states spell (``"1"`` and ``"01"``), raises a
        ``CaseError`` whatever ``on_unknown`` says; a number no state spells
        is an unknown label.

        Uncertain observations (likelihood weights, virtual evidence): a
        column may hold, in some or all of its cells, a dict (or Series) of
        weights state -> relative chance of the row's report given that
        state; every state is named, weights are finite, 0 or more and not
        all 0, and only their ratios matter (``{"high": 1, "normal": 0}`` is
        the label ``"high"``). Such a cell enters the row's update as
        ``case.observe(item, likelihood=...)`` does; labels in the same
        column are read as usual, missing cells as not observed.
    weights : mapping, optional
        The same in wide form: item name -> a DataFrame with the same index
        as ``rows`` and one column per state of the item holding the row's
        weights (a row of NaN: not observed). The item must not also be a
        column of ``rows``. (The probability form, Jeffrey's rule, needs the
        sequential engine: use ``case.observe(item, probability=...)`` and
        ``case.update()``.)
    chunk_size : int, optional
        Rows scored at a time (default: about 4 MB of float64 per chunk).
        Results do not depend on it.
    on_unknown : {"raise", "skip"}
        A label that is not a state of its item raises a ``CaseError`` naming
        the row, the column and the value (default). With ``"skip"`` such
        labels are treated as not observed and counted per row in an extra
        ``n_unknown`` column, so none is dropped silently.
    prefix : str
        Prefix for the posterior column names (use one, e.g. ``"p_"``, when a
        hypothesis is named like a result column).
    threads : int, optional
        Threads scoring chunks side by side. Default: :func:`default_threads`,
        the CPUs this process may use less the load of other processes, at
        most 4, and 1 for small frames; 1 on a Dask DataFrame, whose
        partitions already run in parallel. A number given here is used as
        it is (at most one thread per chunk). Results do not depend on it.
    weak_below : float
        The threshold of the ``weak_map`` flag, a probability in (0, 1]: a
        row is flagged when the posterior of its MAP hypothesis is below it
        (default 0.5: no hypothesis holds a majority of the belief).

    Returns
    -------
    pandas.DataFrame or dask.dataframe.DataFrame
        Same index as ``rows``. One float column per hypothesis (the
        posterior; rows sum to 1), then:

        ``map``
            The MAP hypothesis (categorical; the first of tied maxima, as in
            the engine).
        ``map_probability``
            The posterior of the MAP hypothesis (float).
        ``weak_map``
            True when ``map_probability`` is below ``weak_below``: the
            MAP hypothesis is a weak lead, worth a look before acting on
            it in a fleet of rows.
        ``n_observed``
            How many evidence items the row observed.
        ``eliminated``
            How many hypotheses with a positive prior the row's evidence
            rules out (an observed state with likelihood exactly 0).
        ``impossible``
            True when the row's evidence is impossible under every hypothesis
            still in play. Like :meth:`Case.update`, the update then stops
            before that item: the posterior is the one just before it.
        ``stopped_at``
            The impossible item (categorical; missing when not stopped).
        ``log_evidence``
            ln P(the applied evidence) under the priors (the log marginal
            likelihood; ``Ledger.log_evidence``).

    Raises
    ------
    CaseTypeError
        ``rows`` is not a DataFrame, or ``case`` is not a Case.
    CaseError
        An empty frame, a column that is not an evidence item of the model,
        an unknown state label (with ``on_unknown="raise"``), a number that
        cannot be read as a state (not whole, or two states spell it), an
        incoherent model, or evidence that depends on other evidence.

    Examples
    --------
    >>> import pandas as pd
    >>> import beliefledger as bl
    >>> model = bl.Case("Pump trip", hypotheses={"bearing": 0.3, "Other": 0.7})
    >>> _ = model.add_evidence("vibration", states=["high", "normal"],
    ...                        likelihoods={"bearing": [0.8, 0.2], "Other": [0.1, 0.9]})
    >>> rows = pd.DataFrame({"vibration": ["high", "normal", None]})
    >>> scored = bl.score_rows(model, rows, weak_below=0.8)
    >>> scored.round(4)[["bearing", "Other", "map", "map_probability", "weak_map"]]
       bearing   Other      map  map_probability  weak_map
    0   0.7742  0.2258  bearing           0.7742      True
    1   0.0870  0.9130    Other           0.9130     False
    2   0.3000  0.7000    Other           0.7000      True
    """
    if on_unknown not in ("raise", "skip"):
        raise CaseError(f"on_unknown is {on_unknown!r}; use 'raise' or 'skip'")
    _check_count("chunk_size", chunk_size, "must be a whole number of rows",
                 "give a positive number of rows")
    _check_count("threads", threads, "must be a whole number", "give 1 or more")
    if not isinstance(prefix, str):
        raise CaseTypeError(f"prefix must be a string, got {type(prefix).__name__}")
    _check_threshold(weak_below)
    is_dask = _is_dask_frame(rows)
    if not is_dask and not isinstance(rows, pd.DataFrame):
        raise CaseTypeError(
            f"rows must be a pandas DataFrame of observation rows (one row per incident, alarm "
            f"or claim, one column per evidence item) or a Dask DataFrame, got "
            f"{type(rows).__name__}; build one with pandas.DataFrame(...)")
    model = compile_model(case)
    columns = _check_columns(model, rows.columns)
    wide = _wide_weights(model, rows, weights, {c for _, c in columns}, is_dask)
    _refuse_dependent(case, [c for _, c in columns] + [model.items[k] for k in wide])
    names = _output_names(model, prefix, on_unknown)
    if is_dask:
        meta = _score_frame(model, rows._meta, columns, names, chunk_size, on_unknown,
                            weak_below=weak_below)
        return rows.map_partitions(_score_partition, model, columns=columns, names=names,
                                   chunk_size=chunk_size, on_unknown=on_unknown,
                                   threads=threads or 1, weak_below=weak_below, meta=meta,
                                   align_dataframes=False)
    if len(rows) == 0:
        raise CaseError("the frame of observation rows has no rows; give one row per incident, "
                        "alarm or claim to score")
    chunk = chunk_size or _default_chunk(len(model.hypotheses))
    threads = threads or default_threads(len(rows), len(model.hypotheses), chunk)
    return _score_frame(model, rows, columns, names, chunk, on_unknown, threads,
                        weak_below=weak_below, wide=wide)


# --------------------------------------------------------------------------- weights


def _is_weights_column(column: pd.Series) -> bool:
    """An object column holding dicts or Series of weights in some cells (read fast:
    pandas' type inference runs in C, and a column of text stops there)."""
    if column.dtype != object or len(column) == 0:
        return False
    if pd.api.types.infer_dtype(column, skipna=True) in ("string", "empty", "bytes"):
        return False
    return any(isinstance(v, dict | pd.Series) or hasattr(v, "keys") for v in column.array)


def _check_weight_row(model: _Model, k: int, w: np.ndarray, where: str) -> None:
    if not np.all(np.isfinite(w)) or (w < 0).any() or not (w > 0).any():
        raise CaseError(f"{where}: the likelihood weights {dict(zip(model.states[k], w.tolist(), strict=True))} "
                        "must be finite, 0 or more and not all 0 (only their ratios matter); "
                        "fix the row, or leave it empty for not observed")


def _weights_matrix(model: _Model, k: int, column: pd.Series, on_unknown: str
                    ) -> tuple[np.ndarray, np.ndarray]:
    """(rows x states weights scaled to a largest of 1, NaN rows not observed; count of
    unknown labels skipped per row) from a column of dicts, labels and missing cells."""
    states = model.states[k]
    pos = {st: i for i, st in enumerate(states)}
    out = np.full((len(column), len(states)), np.nan)
    skipped = np.zeros(len(column), dtype=np.int32)
    for r, v in enumerate(column.array):
        where = f"row {_plain(column.index[r])!r}, column {column.name!r}"
        if isinstance(v, pd.Series):
            v = v.to_dict()
        if hasattr(v, "keys"):
            missing, unknown = key_gaps(v, states)
            if unknown or missing:
                raise CaseError(f"{where}: the likelihood weights name unknown state(s) "
                                f"{unknown} and miss state(s) {missing}; give one weight for each "
                                f"state {list(states)} of evidence '{model.items[k]}'")
            try:
                w = np.array([float(v[x]) for x in states])
            except (TypeError, ValueError, OverflowError):
                raise CaseError(f"{where}: the likelihood weights {v!r:.80} must be finite "
                                "numbers") from None
            _check_weight_row(model, k, w, where)
            out[r] = w / w.max()
        elif v is None or (isinstance(v, float) and np.isnan(v)) or v is pd.NA:
            continue
        elif isinstance(v, str) and v in pos:
            out[r] = 0.0
            out[r, pos[v]] = 1.0
        elif on_unknown == "skip":
            skipped[r] = 1
        else:
            raise CaseError(f"{where}: {v!r:.60} is not a state of evidence '{model.items[k]}' "
                            f"nor a dict of likelihood weights; its states are {list(states)}; "
                            "fix the cell, leave it empty for not observed, or pass "
                            "on_unknown='skip'")
    return out, skipped


def _wide_weights(model: _Model, rows: Any, weights: Any, in_rows: set[Any], is_dask: bool
                  ) -> dict[int, np.ndarray]:
    """Item position -> rows x states weights from ``weights=`` (one frame per item)."""
    if weights is None:
        return {}
    if is_dask:
        raise CaseError("weights= takes pandas frames; with a Dask DataFrame put the weights in "
                        "a column of dicts instead")
    if not isinstance(weights, dict):
        raise CaseTypeError(f"weights must map evidence name -> a DataFrame of weights (one "
                            f"column per state), got {type(weights).__name__}")
    pos = {name: i for i, name in enumerate(model.items)}
    out = {}
    for item, frame in weights.items():
        if item not in pos:
            raise CaseError(f"weights names {item!r:.60}, which is not an evidence item of the "
                            f"model; the items are {_short(model.items)}")
        if item in in_rows:
            raise CaseError(f"evidence '{item}' is both a column of the rows and a frame of "
                            "weights=; give it one way")
        if not isinstance(frame, pd.DataFrame):
            raise CaseTypeError(f"weights of evidence '{item}' must be a DataFrame with one column "
                                f"per state, got {type(frame).__name__}")
        k = pos[item]
        states = list(model.states[k])
        if set(map(str, frame.columns)) != set(states) or len(frame.columns) != len(states):
            raise CaseError(f"weights of evidence '{item}' have columns {list(frame.columns)}; "
                            f"give one column per state {states}")
        if not frame.index.equals(rows.index):
            raise CaseError(f"weights of evidence '{item}' are not indexed like the rows; give "
                            "the frame the rows' index (one weights row per observation row)")
        frame = frame.rename(columns=str)[states]
        try:
            w = frame.to_numpy(dtype=float)
        except (TypeError, ValueError):
            raise CaseError(f"weights of evidence '{item}' must be numbers") from None
        seen = ~np.isnan(w).all(axis=1)
        for r in np.flatnonzero(seen):
            _check_weight_row(model, k, w[r], f"weights of evidence '{item}', row "
                                              f"{_plain(frame.index[r])!r}")
        out[k] = np.where(seen[:, None], w / np.where(seen, np.nanmax(
            np.where(seen[:, None], w, 1.0), axis=1), 1.0)[:, None], np.nan)
    return out


# --------------------------------------------------------------------------- checks


def _check_threshold(weak_below: Any) -> None:
    """``weak_below`` is a probability in (0, 1]."""
    if isinstance(weak_below, bool) or not isinstance(weak_below, int | float | np.number):
        raise CaseTypeError(f"weak_below must be a probability in (0, 1], got "
                            f"{type(weak_below).__name__} {weak_below!r}")
    if not 0 < weak_below <= 1:
        raise CaseError(f"weak_below is {weak_below!r}; give a probability above 0 and at most "
                        "1 (default 0.5): rows whose MAP hypothesis has a posterior below it "
                        "are flagged weak_map")


def _is_dask_frame(obj: Any) -> bool:
    mod = type(obj).__module__ or ""
    return mod.split(".")[0] in ("dask", "dask_expr") and hasattr(obj, "map_partitions") \
        and hasattr(obj, "columns")


def _check_columns(model: _Model, columns: Sequence[Any]) -> tuple[tuple[int, Any], ...]:
    """(item position, column label) for each column, in the model's evidence order."""
    cols = list(columns)
    if not cols:
        raise CaseError("the frame of observation rows has no columns; give one column per "
                        f"evidence item, named after the items {_short(model.items)}")
    pos = {name: i for i, name in enumerate(model.items)}
    seen: dict[Any, int] = {}
    out = []
    for c in cols:
        if c in seen:
            raise CaseError(f"the observation rows have column {c!r} twice; give each evidence "
                            "item one column")
        seen[c] = 1
        if not isinstance(c, str) or c not in pos:
            hint = ""
            if isinstance(c, str):
                near = [n for n in model.items if n.strip().lower() == c.strip().lower()]
                if near:
                    hint = f" (did you mean {near[0]!r}?)"
            raise CaseError(f"column {c!r} of the observation rows is not an evidence item of "
                            f"the model{hint}; the items are {_short(model.items)}; rename or "
                            "drop the column (keep row identifiers, e.g. alarm ids, in the index)")
        out.append((pos[c], c))
    return tuple(sorted(out, key=lambda t: t[0]))


def _refuse_dependent(case: Case, names: list[str]) -> None:
    """Batch scoring adds one independent table per item; an observed item of a joint
    group or a conditional chain needs the sequential engine."""
    links = case.dependence_links()
    for name in names:
        if name in links:
            raise CaseError(f"column '{name}' is evidence in a stated dependence ({links[name]}); "
                            "score_rows handles independent evidence items only: drop the "
                            "column, or score such rows one by one with case.update()")


def _output_names(model: _Model, prefix: str, on_unknown: str) -> tuple[str, ...]:
    extra = (*RESULT_COLUMNS, UNKNOWN_COLUMN) if on_unknown == "skip" else RESULT_COLUMNS
    post = tuple(f"{prefix}{h}" for h in model.hypotheses)
    clash = [c for c in post if c in extra]
    if clash:
        raise CaseError(f"hypothesis column {clash[0]!r} would collide with a result column "
                        f"{list(extra)}; pass prefix='p_' (or another) to score_rows")
    return post + extra


def _short(names: Sequence[str], limit: int = 10) -> str:
    names = list(names)
    if len(names) <= limit:
        return str(names)
    return str(names[:limit])[:-1] + f", ... ({len(names)} in all)]"


# --------------------------------------------------------------------------- labels -> codes

_REFUSED = -1  # a row code the coder raises on before anything uses it
_INT_TEXT = re.compile(r"\s*[+-]?[0-9]+\s*")
_INT64_END = 2**63  # whole numbers at or beyond +-2**63 spell no state
_LUT_SPAN = 2**16  # integer states spanning more are looked up by binary search


class _WholeNumbers:
    """How one item reads whole numbers: the number ``v`` is the state spelled ``str(v)``.

    ``spellings`` maps every integer some state spells (leading zeros, a sign
    and spaces allowed) to those states. A number becomes the index of the
    state spelled exactly ``str(v)``; ``n_states + 1`` (an unknown label) when
    no state is (only ``"01"`` for 1); ``_REFUSED`` when two states spell it
    (``"1"`` and ``"01"``): ambiguous. Looked up in a table indexed by the
    number when the numbers span at most ``_LUT_SPAN``, else by binary search.
    """

    def __init__(self, states: tuple[str, ...]) -> None:
        spelled: dict[int, list[str]] = {}
        for s in states:
            if _INT_TEXT.fullmatch(s) and -_INT64_END < int(s) < _INT64_END - 1:
                spelled.setdefault(int(s), []).append(s)
        self.spellings = spelled
        self.unknown = len(states) + 1
        dtype = np.int16 if len(states) < 32000 else np.int64
        where = {s: i for i, s in enumerate(states)}
        nums = sorted(spelled)
        self.numbers = np.array(nums, dtype=np.int64)
        self.codes = np.array([_REFUSED if len(spelled[v]) > 1 else where.get(str(v), self.unknown)
                               for v in nums], dtype=dtype)
        self.lut = None
        if not nums or nums[-1] - nums[0] < _LUT_SPAN:
            # entry 0: below the lowest number, entry -1: above the highest (both unknown)
            self.low = nums[0] - 1 if nums else 0
            self.lut = np.full((nums[-1] - self.low + 2) if nums else 2, self.unknown, dtype)
            self.lut[self.numbers - self.low] = self.codes

    def __call__(self, x: np.ndarray) -> np.ndarray:
        """Codes of the numbers ``x``: floats that are not whole int64 values (NaN, inf,
        1.5, 1e30) come out ``_REFUSED``, for the caller to sort out."""
        if x.dtype.kind == "f":
            with np.errstate(invalid="ignore"):
                xi = x.astype(np.int64)  # NaN, inf and out-of-range values: garbage ...
            return np.where(xi == x, self._lookup(xi), _REFUSED)  # ... that fails this test
        if x.dtype.kind == "u" and x.dtype.itemsize == 8:
            return np.where(x < _INT64_END, self._lookup(x.astype(np.int64)), self.unknown)
        return self._lookup(x.astype(np.int64, copy=False))

    def _lookup(self, x: np.ndarray) -> np.ndarray:
        """Codes of int64 values."""
        if self.lut is not None:
            idx = np.clip(x, self.low, self.low + self.lut.size - 1)
            idx -= self.low
            return self.lut[idx]
        pos = np.searchsorted(self.numbers, x)
        np.minimum(pos, self.numbers.size - 1, out=pos)
        return np.where(self.numbers[pos] == x, self.codes[pos], self.unknown)


def _is_numbers(dtype: Any) -> bool:
    """Integer or float columns (numpy or pandas nullable; not bool): whole-number codes."""
    return ((pd.api.types.is_integer_dtype(dtype) or pd.api.types.is_float_dtype(dtype))
            and (isinstance(dtype, np.dtype) or hasattr(dtype, "numpy_dtype")))


def _as_numbers(values: pd.Series | pd.Index) -> tuple[np.ndarray, np.ndarray]:
    """A numeric column (or categories) as a numpy array and its missing-value mask."""
    if isinstance(values.dtype, np.dtype):
        x = values.to_numpy()
        return x, (np.isnan(x) if x.dtype.kind == "f" else np.zeros(x.shape, dtype=bool))
    missing = np.asarray(values.isna())
    x = values.to_numpy(dtype=values.dtype.numpy_dtype, na_value=0)
    return x, (missing | np.isnan(x) if x.dtype.kind == "f" else missing)


class _Coder:
    """Turns one column of state labels into row codes: the state index, ``n_states``
    for not observed, ``n_states + 1`` for an unknown label.

    Categorical columns map their categories once; integer and float columns are
    read as whole-number codes of the states (``v`` is the state ``str(int(v))``,
    NaN is not observed) with one table look-up per cell; other columns are
    factorised chunk by chunk (one hash pass per cell). Memory stays bounded
    either way. A value that cannot be read (a non-whole number, a number two
    states spell) raises when its chunk is coded.
    """

    def __init__(self, item: str, states: tuple[str, ...], column: pd.Series) -> None:
        self.item, self.states = item, states
        self.n = len(states)
        self.index = pd.Index(states, dtype=object)
        self.codes = None
        numbers = column.cat.categories if isinstance(column.dtype, pd.CategoricalDtype) \
            else column
        self.numbers = _WholeNumbers(states) if _is_numbers(numbers.dtype) else None
        self.refuses = self.numbers is not None
        if isinstance(column.dtype, pd.CategoricalDtype):
            self.lut = self._lut(column.cat.categories)
            self.codes = column.array.codes  # a read-only view (cat.codes copies)
            self.refuses = bool((self.lut < 0).any())

    def _lut(self, labels: Any) -> np.ndarray:
        if self.numbers is not None:
            lut = self._number_codes(labels)
        elif len(labels):
            lut = self.index.get_indexer(labels)
            lut = np.where(lut < 0, self.n + 1, lut)
        else:
            lut = np.empty(0, dtype=np.intp)
        # code -1 (missing) picks the last entry: not observed
        return np.append(lut, self.n).astype(np.int16 if self.n < 32000 else np.int64)

    def _number_codes(self, values: pd.Series | pd.Index) -> np.ndarray:
        x, missing = _as_numbers(values)
        codes = self.numbers(x)
        np.putmask(codes, missing, self.n)
        return codes

    def __call__(self, column: pd.Series, a: int, b: int) -> np.ndarray:
        if self.codes is not None:
            codes = self.lut[self.codes[a:b]]
        elif self.numbers is not None:
            codes = self._number_codes(column.iloc[a:b])
        else:
            codes, labels = pd.factorize(column.iloc[a:b], use_na_sentinel=True)
            return self._lut(labels)[codes]
        if self.refuses:
            bad = np.flatnonzero(codes == _REFUSED)
            if bad.size:
                raise self.refused_error(column, a + int(bad[0]))
        return codes

    def refused_error(self, column: pd.Series, where: int) -> CaseError:
        """A number the column cannot be read as: not whole, or spelled by two states."""
        value, label = _plain(column.iloc[where]), _plain(column.index[where])
        whole = float(value).is_integer()
        if whole and len(self.numbers.spellings.get(int(value), ())) < 2:
            return self.unknown_error(column, where)  # a whole float beyond the int64 range
        head = f"row {label!r}, column {column.name!r}: {value!r}"
        rule = (f"the column holds numbers, each read as the state of evidence '{self.item}' "
                "that spells it (7 as '7')")
        if not whole:
            return CaseError(f"{head} is not a whole number; {rule}, and its states are "
                             f"{list(self.states)}; fix the value, or leave it empty (NaN) for not "
                             f"observed{self._text_hint(column, value)}")
        v = int(value)
        spellings = self.numbers.spellings[v]
        return CaseError(f"{head} could be state {' or '.join(map(repr, spellings))}; {rule}, "
                         f"and two states spell {v}: rename the states so that each number has "
                         "one spelling, or map the column to state labels yourself (e.g. "
                         f".map({{{v}: {spellings[-1]!r}}}))")

    def unknown_error(self, column: pd.Series, where: int) -> CaseError:
        """A label (or number) that is not a state of the item."""
        value, label = _plain(column.iloc[where]), _plain(column.index[where])
        hint = self._number_hint(value) if self.numbers is not None else \
            self._text_hint(column, value)
        return CaseError(f"row {label!r}, column {column.name!r}: {value!r} is not a state of "
                         f"evidence '{self.item}'{hint}; its states are {list(self.states)}; fix "
                         "the label, leave it empty for not observed, or pass on_unknown='skip' "
                         "to count and skip unknown labels")

    def _number_hint(self, value: Any) -> str:
        v = int(value)
        others = self.numbers.spellings.get(v)
        if others:
            return (f" (a number is read as the state that spells it, {v} as '{v}', but the "
                    f"states spell it {others[0]!r}: rename the states to plain numbers, or map "
                    f"the column to state labels yourself, e.g. .map({{{v}: {others[0]!r}}}))")
        return f" (a number is read as the state that spells it: {v} as '{v}', not a state)"

    def _text_hint(self, column: pd.Series, value: Any) -> str:
        if isinstance(value, str) or str(value) not in self.states:
            return ""
        if isinstance(column.dtype, pd.CategoricalDtype):
            return (f" (the categories are {column.cat.categories.dtype} values, not text: "
                    "rename them with .cat.rename_categories(str), which keeps the fast "
                    "categorical path)")
        return (f" (the column holds {column.dtype} values, not text: convert it with "
                ".astype('string'), which keeps missing values missing)")


def _plain(x: Any) -> Any:
    """A numpy scalar as the Python value it holds (for messages)."""
    return x.item() if isinstance(x, np.generic) else x


# --------------------------------------------------------------------------- scoring


def default_threads(n_rows: int, n_hyps: int, chunk: int) -> int:
    """How many threads :func:`score_rows` uses when ``threads`` is not given.

    The CPUs this process may run on (its affinity mask where the platform
    has one, ``os.sched_getaffinity``, else ``os.cpu_count()``), less the
    load of other processes (the one-minute load average, ``os.getloadavg``,
    where available), rounded to the nearest whole CPU, so a CPU at least
    half free counts; never below 1, at most 4 and at most one per chunk.
    Small work (fewer than 2**18 rows x hypotheses) gets 1: starting threads
    would cost more than they save. On a busy machine a second thread only
    competes with the other processes for the same CPUs, and is slower.

    Parameters
    ----------
    n_rows : int
        Rows to score.
    n_hyps : int
        Hypotheses of the model.
    chunk : int
        Rows scored at a time (a positive number).

    Returns
    -------
    int
        The number of threads, 1 to 4.

    Notes
    -----
    The load average counts this process too while it is busy (a loop of
    large calls sees its own earlier work), and CPU quotas of a container
    (cgroups) are not seen; pass ``threads`` to :func:`score_rows` to
    choose yourself.

    Examples
    --------
    >>> default_threads(n_rows=1000, n_hyps=5, chunk=1024)  # small: one thread
    1
    """
    if n_rows * n_hyps < _THREAD_MIN_CELLS:
        return 1
    n_chunks = -(-n_rows // max(chunk, 1))
    free = _available_cpus() - _current_load()
    return max(1, min(_MAX_THREADS, n_chunks, int(free + 0.5)))


def _available_cpus() -> int:
    """CPUs this process may run on: its affinity mask where there is one."""
    affinity = getattr(os, "sched_getaffinity", None)
    if affinity is not None:
        try:
            return max(len(affinity(0)), 1)
        except OSError:
            pass
    return os.cpu_count() or 1


def _current_load() -> float:
    """The one-minute load average (runnable processes), 0 where the platform has none."""
    loadavg = getattr(os, "getloadavg", None)
    if loadavg is None:
        return 0.0
    try:
        return max(float(loadavg()[0]), 0.0)
    except OSError:
        return 0.0


def _default_chunk(n_hyps: int) -> int:
    return int(min(max(_CHUNK_BYTES // (8 * max(n_hyps, 1)), 1024), 1 << 20))


_GROUP_ROWS = 1024  # rows of a combined table (fits in a core's L2 cache for ~10 hypotheses)


def _groups(model: _Model, present: list[int]) -> list[tuple[list[int], list[int], np.ndarray]]:
    """Bundle consecutive present items into groups whose combined log table
    (the outer sum of their tables, one row per joint code) stays small, so one
    gather and one add per row serve several items.

    Returns ``(positions in present, radices, combined table)`` per group.
    """
    out: list[tuple[list[int], list[int], np.ndarray]] = []
    pos: list[int] = []
    radix: list[int] = []
    table = None
    for i, k in enumerate(present):
        t = model.log_tables[k]
        r = t.shape[0]
        if table is not None and table.shape[0] * r <= _GROUP_ROWS:
            table = (table[:, None, :] + t[None, :, :]).reshape(-1, t.shape[1])
            pos.append(i)
            radix.append(r)
            continue
        if table is not None:
            out.append((pos, radix, table))
        pos, radix, table = [i], [r], t
    if table is not None:
        out.append((pos, radix, table))
    return out


def _score_frame(model: _Model, frame: pd.DataFrame, columns: tuple[tuple[int, Any], ...],
                 names: tuple[str, ...], chunk_size: int | None, on_unknown: str,
                 threads: int = 1, *, weak_below: float = 0.5,
                 wide: dict[int, np.ndarray] | None = None) -> pd.DataFrame:
    """Score one pandas frame (a whole input or one Dask partition; may be empty)."""
    n, h = len(frame), len(model.hypotheses)
    chunk = chunk_size or _default_chunk(h)
    # the output arrays; each chunk writes its own rows. Category codes come in the
    # dtype pandas would pick, so the categoricals take them as they are.
    o = {"post": np.empty((n, h)),
         "map": np.empty(n, dtype=_code_dtype(h)),
         "map_p": np.empty(n),
         "stop": np.full(n, -1, dtype=_code_dtype(len(model.items))),
         "n_obs": np.zeros(n, dtype=np.int32),
         "n_unk": np.zeros(n if on_unknown == "skip" else 0, dtype=np.int32),
         "elim": np.zeros(n, dtype=np.int32),
         "log_ev": np.empty(n)}
    series = [(k, col, frame[col]) for k, col in columns]
    # columns of likelihood weights (dict cells) and weights= frames: rows x states
    weighted = dict(wide or {})
    unk_w = np.zeros(n, dtype=np.int32)
    for k, _, s_ in series:
        if _is_weights_column(s_):
            weighted[k], skipped = _weights_matrix(model, k, s_, on_unknown)
            unk_w += skipped
    series = [t for t in series if t[0] not in weighted]
    w_tables = {k: np.exp(model.log_tables[k][:len(model.states[k]), :h]) for k in weighted}
    coders = [_Coder(model.items[k], model.states[k], s) for k, _, s in series]
    groups = _groups(model, [k for k, _, _ in series])
    count_eliminated = (not _SKIP_ZERO_FREE_COUNT or bool(weighted)
                        or _any_zero_likelihood(model, columns))
    width = min(chunk, n)
    scratch = threading.local()

    def run(a: int) -> None:
        """Score rows a .. a + chunk into the output arrays (disjoint slices per chunk)."""
        if not hasattr(scratch, "w"):
            scratch.w = np.empty((width, h + 2))
            scratch.t = np.empty_like(scratch.w)
            scratch.joint = np.empty(width, dtype=np.intp)
        b = min(a + chunk, n)
        m = b - a
        codes = [coder(s, a, b) for (_, _, s), coder in zip(series, coders, strict=True)]
        wm, tm, jm = scratch.w[:m], scratch.t[:m], scratch.joint[:m]
        wm[:, :h] = model.log_prior
        wm[:, h:] = 0.0
        for pos, radix, table in groups:
            jm[:] = codes[pos[0]]
            for i, r in zip(pos[1:], radix[1:], strict=True):
                jm *= r
                jm += codes[i]
            np.take(table, jm, axis=0, out=tm, mode="clip")  # codes are in range
            wm += tm  # -inf (a zero likelihood) stays -inf; no +inf occurs, so no NaN
        for k, wmat in weighted.items():
            seen = ~np.isnan(wmat[a:b, 0])
            if seen.any():
                wm[seen, :h] += _log_rows(wmat[a:b][seen], w_tables[k])
                wm[seen, h] += 1
        o["n_obs"][a:b] = wm[:, h]
        if on_unknown == "skip":
            o["n_unk"][a:b] = wm[:, h + 1] + unk_w[a:b]
        elif wm[:, h + 1].any():
            r = int(np.flatnonzero(wm[:, h + 1])[0])
            i = next(i for i, (k, _, _) in enumerate(series)
                     if codes[i][r] == len(model.states[k]) + 1)
            raise coders[i].unknown_error(series[i][2], a + r)
        lw = wm[:, :h]
        # log-sum-exp per row, fused with the posterior: one exp per entry
        top = lw.max(axis=1)
        bad = np.isneginf(top)
        if bad.any():
            rows = np.flatnonzero(bad)
            steps = [(k, (lambda r, k=k, c=c: model.log_tables[k][c[r], :h]))
                     for (k, _, _), c in zip(series, codes, strict=True)]
            # a row not observing a weighted item: all-ones weights (its table's columns
            # sum to 1, so the step changes nothing)
            steps += [(k, (lambda r, k=k: _log_rows(np.where(np.isnan(weighted[k][a + r]), 1.0,
                                                             weighted[k][a + r]), w_tables[k])))
                      for k in weighted]
            lw[rows], o["stop"][a + rows] = _stop_early(model, sorted(steps,
                                                                      key=lambda t: t[0]), rows)
            top[rows] = lw[rows].max(axis=1)
        out = o["post"][a:b]
        np.subtract(lw, top[:, None], out=out)
        np.exp(out, out=out)
        total = out.sum(axis=1)
        out /= total[:, None]
        top_h = np.argmax(out, axis=1)
        o["map"][a:b] = top_h
        o["map_p"][a:b] = np.take_along_axis(out, top_h[:, None], axis=1)[:, 0]
        if count_eliminated:  # else no row can eliminate anything: the zeros stand
            o["elim"][a:b] = np.count_nonzero(np.isneginf(lw) & model.positive_prior, axis=1)
        o["log_ev"][a:b] = (top - model.log_prior_total) + np.log(total)

    starts = range(0, n, chunk)
    if threads > 1 and len(starts) > 1:
        # numpy releases the GIL in these loops; results are in order, so the first
        # bad row reported is the same as in a single thread
        with ThreadPoolExecutor(max_workers=min(threads, len(starts))) as pool:
            for f in [pool.submit(run, a) for a in starts]:
                f.result()
    else:
        for a in starts:
            run(a)
    # The posterior block goes in as it is (no copy); the other columns are added one at
    # a time, each array dropped once it is in, so the peak stays near the result's size.
    result = pd.DataFrame(o.pop("post"), index=frame.index, columns=list(names[:h]),
                          copy=False)
    result["map"] = pd.Categorical.from_codes(o.pop("map"), categories=list(model.hypotheses))
    map_p = o.pop("map_p")
    result["map_probability"] = map_p
    result["weak_map"] = map_p < weak_below
    del map_p
    result["n_observed"] = o.pop("n_obs")
    result["eliminated"] = o.pop("elim")
    stop = o.pop("stop")
    result["impossible"] = stop >= 0
    result["stopped_at"] = pd.Categorical.from_codes(stop, categories=list(model.items))
    del stop
    result["log_evidence"] = o.pop("log_ev")
    if on_unknown == "skip":
        result[UNKNOWN_COLUMN] = o.pop("n_unk")
    return result


def _any_zero_likelihood(model: _Model, columns: tuple[tuple[int, Any], ...]) -> bool:
    """Whether a likelihood of a scored item is exactly 0. Only then can a row eliminate
    a hypothesis with a positive prior (or be impossible): without one, every log weight
    of such a hypothesis stays finite."""
    h = len(model.hypotheses)
    return any(bool(np.isneginf(model.log_tables[k][:, :h]).any()) for k, _ in columns)


def _code_dtype(n_categories: int) -> type:
    for dt in (np.int8, np.int16, np.int32):
        if n_categories < np.iinfo(dt).max:
            return dt
    return np.int64


def _score_partition(frame: pd.DataFrame, model: _Model, *, columns, names, chunk_size,
                     on_unknown, threads, weak_below) -> pd.DataFrame:
    """One Dask partition (``map_partitions`` passes the partition first)."""
    return _score_frame(model, frame, columns, names, chunk_size, on_unknown, threads,
                        weak_below=weak_below)


def _log_rows(w: np.ndarray, table: np.ndarray) -> np.ndarray:
    """ln of (weights rows x states) @ (states x hypotheses): each row's likelihood of its
    report under every hypothesis (virtual evidence)."""
    with np.errstate(divide="ignore"):
        return np.log(w @ table)


def _stop_early(model: _Model, steps: list, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Replay the rows whose evidence is impossible as a whole, item by item in the
    model's order, and stop each before its first impossible item (as the engine does).

    ``steps`` is (item position, rows -> their log-likelihood rows) in model
    order. Returns the log weights at the stop and the index of the impossible
    item. Vectorised over the rows; the loop runs over evidence items.
    """
    w = np.broadcast_to(model.log_prior, (len(rows), len(model.log_prior))).copy()
    stop = np.full(len(rows), -1, dtype=np.int32)
    live = np.ones(len(rows), dtype=bool)
    for k, rows_of in steps:
        nxt = w + rows_of(rows)
        dead = live & ~np.isfinite(log_normalizer(nxt, axis=1))
        stop[dead] = k
        live &= ~dead
        w[live] = nxt[live]
    return w, stop


__all__ = ["score_rows", "compile_model", "default_threads", "RESULT_COLUMNS", "UNKNOWN_COLUMN"]
