"""The batch on a dask.distributed cluster: a real LocalCluster (two worker processes) in the test.

The cluster's workers are separate processes reading the takes and writing the renders at
the same paths (the shared-path contract of ``--cluster``); the results must equal a local
run's, sample for sample.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from emulate.cli import main
from emulate.errors import BadValueError
from emulate.work import batch
from emulate.work.plan import BatchPlan, read_plan

from test_batch import make_season, store_of

distributed = pytest.importorskip("distributed")


@pytest.fixture
def season(tmp_path):
    return make_season(tmp_path)


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                  silence_logs=50) as local:
        yield local


@pytest.mark.slow
class TestClusterRunner:
    def test_renders_equal_a_local_run(self, cluster, season, tmp_path):
        runner = batch.ClusterRunner(cluster.scheduler_address)
        try:
            checked = batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))
            results = batch.run_batch(checked, runner)
        finally:
            runner.close()
        assert [r.status for r in results] == ["rendered"] * 3
        elsewhere = BatchPlan(read_plan(season / "plan.toml").speakers, tmp_path / "local", season)
        local = batch.prepare_batch(elsewhere, store_of(season))
        for r, l in zip(results, batch.run_batch(local, batch.LocalRunner(1))):
            np.testing.assert_array_equal(sf.read(r.output)[0], sf.read(l.output)[0])
            assert r.sibilance_band_change_db == pytest.approx(l.sibilance_band_change_db, abs=1e-9)

    def test_the_command(self, cluster, season):
        result = CliRunner().invoke(main, ["batch", str(season / "plan.toml"), "--cluster", cluster.scheduler_address,
                                           "--presets", str(season / "presets"), "--json"])
        assert result.exit_code == 0, result.output
        assert json.loads(result.output)["totals"]["rendered"] == 3


class TestClusterUnreachable:
    def test_one_clear_error(self):
        with pytest.raises(BadValueError, match="no scheduler answered.*dask scheduler"):
            batch.ClusterRunner("tcp://127.0.0.1:9", timeout_s=0.5)
