"""--cluster: the same job on a Dask LocalCluster with two workers gives the same bytes."""

from __future__ import annotations

import pytest
from _dataset_doubles import spec, tree

from genfield.dataset.writer import write_dataset
from genfield.errors import UsageError

distributed = pytest.importorskip("distributed")


@pytest.mark.slow
def test_a_two_worker_local_cluster_writes_what_a_local_run_writes(tmp_path):
    write_dataset(tmp_path / "local", spec(count=8))
    # processes=False: the workers are threads of this process, which keeps the test fast; the
    # task still receives the job through Dask's scatter and returns the bytes over its comms.
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster:
        summary = write_dataset(tmp_path / "cluster", spec(count=8), cluster=cluster.scheduler_address)
        executed = [w.state.executed_count for w in cluster.workers.values()]
    assert summary.rendered == 8
    assert len(executed) == 2 and min(executed) >= 1 and sum(executed) >= 8  # both rendered
    assert tree(tmp_path / "cluster") == tree(tmp_path / "local")


def test_an_unreachable_scheduler_is_a_clear_error(tmp_path, monkeypatch):
    monkeypatch.setattr("genfield.dataset.executors.CONNECT_TIMEOUT", "1s")
    with pytest.raises(UsageError, match="cannot reach the Dask scheduler"):
        write_dataset(tmp_path / "ds", spec(count=2), cluster="tcp://127.0.0.1:9")


def test_without_dask_installed_the_error_says_what_to_install(tmp_path, monkeypatch):
    monkeypatch.setitem(__import__("sys").modules, "distributed", None)  # import now fails
    with pytest.raises(UsageError, match="genfield\\[cluster\\]"):
        write_dataset(tmp_path / "ds", spec(count=2), cluster="tcp://127.0.0.1:9")
