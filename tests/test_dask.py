"""score_rows on a Dask DataFrame, on a local two-worker cluster, against the pandas path.

Needs the optional extra ``beliefledger[dask]``; skipped with a message without it.
The model and observation rows are invented, seeded test data (see test_batch.py).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

dd = pytest.importorskip("dask.dataframe", reason="dask is not installed: "
                         "pip install 'beliefledger[dask]' to run the Dask tests")
distributed = pytest.importorskip("distributed", reason="distributed is not installed: "
                                  "pip install 'beliefledger[dask]' to run the Dask tests")

import beliefledger as bl  # noqa: E402
from test_batch import gauge_model, gauge_rows, random_model, random_rows  # noqa: E402


@pytest.fixture(scope="module")
def client():
    import dask

    # dask turns object columns and indexes into its own string dtype on the way in;
    # keep the input as pandas has it so the two paths see the same frame
    config = dask.config.set({"dataframe.convert-string": False})
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, host="127.0.0.1",
                                       dashboard_address=None, processes=True,
                                       silence_logs=40)
    c = distributed.Client(cluster)
    try:
        yield c
    finally:
        c.close()
        cluster.close()
        config.__exit__(None, None, None)


@pytest.fixture(scope="module")
def data():
    rng = np.random.default_rng(20261201)
    model = random_model(rng)
    rows = random_rows(rng, model, 3000)
    return model, rows


def test_dask_path_equals_pandas_path(client, data):
    model, rows = data
    ref = bl.score_rows(model, rows)
    assert ref["impossible"].any() and (ref["eliminated"] > 0).any()
    ddf = dd.from_pandas(rows, npartitions=5)
    lazy = bl.score_rows(model, ddf, chunk_size=97)
    assert isinstance(lazy, dd.DataFrame)
    assert list(lazy.columns) == list(ref.columns)
    assert dict(lazy.dtypes) == dict(ref.dtypes)
    got = client.compute(lazy).result()
    # the workers are other processes: the model travelled there and back by pickle
    assert set(client.run(lambda: 1)) and len(client.scheduler_info()["workers"]) == 2
    pd.testing.assert_frame_equal(got, ref, check_exact=True)


def test_dask_categorical_columns_and_skip_option(client, data):
    model, rows = data
    frame = rows.copy()
    frame.iloc[11, 2] = "not a state"
    cat = frame.astype("category")
    ref = bl.score_rows(model, frame, on_unknown="skip", weak_below=0.7)
    got = client.compute(bl.score_rows(model, dd.from_pandas(cat, npartitions=3),
                                        on_unknown="skip", weak_below=0.7)).result()
    pd.testing.assert_frame_equal(got, ref, check_exact=True)
    assert got["n_unknown"].sum() == 1
    assert got["weak_map"].any() and (got["weak_map"] == (got["map_probability"] < 0.7)).all()


def test_dask_unknown_label_raises_case_error_at_compute(client, data):
    model, rows = data
    frame = rows.copy()
    frame.loc["alarm-2500", "item 4"] = "typo"
    lazy = bl.score_rows(model, dd.from_pandas(frame, npartitions=4))
    with pytest.raises(bl.CaseError, match=r"row 'alarm-2500', column 'item 4': 'typo'"):
        client.compute(lazy).result()


def test_dask_bad_columns_fail_before_compute(data):
    model, rows = data
    ddf = dd.from_pandas(rows.assign(extra=1), npartitions=2)
    with pytest.raises(bl.CaseError,
                       match=r"column 'extra' of the observation rows is not an evidence"):
        bl.score_rows(model, ddf)


def test_dask_integer_coded_columns(client):
    case, frame = gauge_model(), gauge_rows(np.random.default_rng(20261202), 500)
    ref = bl.score_rows(case, frame)
    got = client.compute(bl.score_rows(case, dd.from_pandas(frame, npartitions=3))).result()
    pd.testing.assert_frame_equal(got, ref, check_exact=True)
