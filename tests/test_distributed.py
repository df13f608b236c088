"""A local dask.distributed cluster gives the same layers as the threaded scheduler."""

import numpy as np
import pytest

import suitmap
from suitmap.errors import InputError
from suitmap.pipeline.scheduling import scheduler


def test_local_cluster_matches_threaded(small_case):
    lazy = suitmap.compute_run(small_case["run"])
    threaded = lazy.compute()
    with scheduler(workers=2) as client:
        assert client is not None
        dist = suitmap.compute_run(small_case["run"]).compute(client=client)
    for name in threaded.periods:
        a, b = threaded.periods[name], dist.periods[name]
        for var in a.data_vars:
            np.testing.assert_array_equal(a[var].values, b[var].values)
    for name in threaded.comparisons:
        for var in threaded.comparisons[name].data_vars:
            np.testing.assert_array_equal(threaded.comparisons[name][var].values,
                                          dist.comparisons[name][var].values)


def test_scheduler_arguments():
    with scheduler() as client:
        assert client is None
    with pytest.raises(InputError, match="not both"):
        with scheduler(workers=1, address="tcp://127.0.0.1:1"):
            pass
    with pytest.raises(InputError, match="at least 1"):
        with scheduler(workers=0):
            pass
