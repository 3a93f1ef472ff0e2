"""The failover drill, short: two replicas behind Debian's nginx, one killed with SIGKILL and
restarted and a new bundle published while wrk replays the query log through nginx (bench/drill.py;
`make drill` runs the long one). Needs nginx and wrk (.ci/run installs them): skips locally without
them, fails under CI=true."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from bench.drill import run_drill

IN_CI = os.environ.get("CI", "").lower() == "true"


def test_a_replica_killed_under_load_costs_no_request(trained_store: Path, demo_dir: Path, tmp_path: Path) -> None:
    missing = [t for t in ("nginx", "wrk") if shutil.which(t) is None and not Path(f"/usr/sbin/{t}").exists()]
    if missing:
        message = f"the drill needs {' and '.join(missing)} (apt-get install nginx-light wrk; .ci/run does)"
        if IN_CI:
            pytest.fail(message)
        pytest.skip(message)
    results = run_drill(trained_store, demo_dir, tmp_path, seconds=4)
    assert results["requests_total"] > 100
    assert results["failed_total"] == 0, results
    assert results["half_loaded_or_broken_answers"] == 0, results
    # The checker saw the old bundle, then the new one, through the load balancer.
    assert set(results["answers_by_bundle"]) == {results["bundles"]["old"], results["bundles"]["new"]}
