"""A scan on a Dask LocalCluster writes exactly what a local scan writes."""

from __future__ import annotations

import pytest

from impactscope.scan.cluster import ClusterError, connect
from impactscope.scan.run import run_scan

from .helpers import build_archive_roots, build_corpus, snapshot, write_changes


def test_local_cluster_scan_equals_local_scan(tmp_path):
    pytest.importorskip("distributed")
    root = build_corpus(tmp_path / "corpus", projects=10)
    zip_root, tar_root = build_archive_roots(tmp_path)
    changes = write_changes(tmp_path)
    roots = [root, zip_root, tar_root]
    local = run_scan(changes, roots, tmp_path / "local.sqlite", jobs=1)
    remote = run_scan(changes, roots, tmp_path / "cluster.sqlite", cluster="local")
    assert (remote.projects, remote.files, remote.findings) == (local.projects, local.files, local.findings)
    assert snapshot(tmp_path / "cluster.sqlite") == snapshot(tmp_path / "local.sqlite")
    # The cache works the same way with a cluster: nothing left to send.
    warm = run_scan(changes, roots, tmp_path / "cluster.sqlite", cluster="local")
    assert warm.reused == warm.projects


def test_unreachable_scheduler_is_a_clear_error():
    pytest.importorskip("distributed")
    with pytest.raises(ClusterError, match="cannot reach a Dask scheduler"):
        with connect("tcp://127.0.0.1:9", timeout=1.0):
            pass
