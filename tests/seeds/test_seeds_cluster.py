"""Distributed execution on a Dask LocalCluster (2 worker processes, 1 thread each).

- the sweep on the cluster gives the same report as in-process (timings and executor name aside);
- DaskExecutor runs the battery's plan exactly like the local Executor;
- a worker killed mid-task is survived (Dask retries the task elsewhere) with the same report;
- a task that keeps killing its workers ends the run as incomplete -- never a silent partial verdict;
- an unreachable scheduler and a missing `distributed` package are one clear InputError.
"""

import json
import os
import sys

import numpy as np
import pytest

distributed = pytest.importorskip("distributed")


from rngassay.battery.cluster import DaskExecutor, connect  # noqa: E402
from rngassay.battery.plan import make_plan  # noqa: E402
from rngassay.battery.run import Executor, run_plan  # noqa: E402
from rngassay.errors import InputError  # noqa: E402
from rngassay.intake.formats import parse_format  # noqa: E402
from rngassay.intake.stream import Stream  # noqa: E402
from rngassay.seeds import SeedFactory, SweepOptions, run_sweep  # noqa: E402
from rngassay.intake.memory import BytesSource as _BytesSource  # noqa: E402

OPTS = SweepOptions(bytes_per_seed=4096, merge_budget=64 << 10, avalanche_seeds=16)
# the worker-killing tests leave out the batteries on merged streams (each restarted worker would load
# every check's compiled kernels again); the per-block and avalanche tasks are what they exercise
FAST = SweepOptions(bytes_per_seed=4096, avalanche_seeds=16, checks=["per-seed", "cross-correlation", "avalanche",
                                                                      "overlaps", "early-bytes"])
SEEDS = np.arange(72, dtype=np.uint64)


def sound(seed):
    return np.random.default_rng(int(seed))


class KillOnce:
    """default_rng(seed), but the first worker that makes seed `victim` dies (os._exit) mid-task."""

    def __init__(self, marker, victim):
        self.marker, self.victim = str(marker), int(victim)

    def __call__(self, seed):
        if int(seed) == self.victim and not os.path.exists(self.marker):
            open(self.marker, "w").close()
            os._exit(1)
        return np.random.default_rng(int(seed))


class KillAlways:
    """default_rng(seed), but making seed `victim` always kills the worker."""

    def __init__(self, victim):
        self.victim = int(victim)

    def __call__(self, seed):
        if int(seed) == self.victim:
            os._exit(1)
        return np.random.default_rng(int(seed))


def _comparable(report):
    d = json.loads(report.to_json())  # a deep copy
    d.pop("elapsed_s")
    for c in d["checks"]:
        c.pop("seconds", None)  # timing only
    for k in ("executor", "workers_used"):
        d["settings"].pop(k)
    d["source"].pop("name")  # the factory's name (callable class vs function)
    return d


@pytest.fixture(scope="module")
def client():
    import cloudpickle

    cloudpickle.register_pickle_by_value(sys.modules[__name__])  # workers need not import this test file
    cluster = distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                       dashboard_address=":0", silence_logs=50)
    c = distributed.Client(cluster, set_as_default=False)
    yield c
    c.close()
    cluster.close()


@pytest.fixture(scope="module")
def serial_report():
    return run_sweep(SEEDS, SeedFactory.from_options(factory=sound), options=OPTS, workers=1)


@pytest.mark.slow  # the whole sweep on a real cluster and in-process (~20 s); the fast run keeps the executor tests
def test_cluster_report_equals_serial(client, serial_report):
    r = run_sweep(SEEDS, SeedFactory.from_options(factory=sound), options=OPTS, client=client)
    assert r.settings["executor"].startswith("dask")
    assert not r.incomplete and len(r.checks) == len(serial_report.checks) >= 12
    assert _comparable(r) == _comparable(serial_report)


@pytest.mark.parametrize("finite", [True, False], ids=["file-like", "generator"])
def test_dask_executor_runs_the_battery_like_the_local_one(client, finite):
    from rngassay.intake.sources import BuiltinSource

    data = np.random.default_rng(3).integers(0, 256, 1 << 20, dtype=np.uint8)
    fmt = parse_format("u1")
    plan = make_plan(fmt, data.size, checks=["classic"])

    def stream():  # a finite stream or a generator (checks share segments either way)
        return Stream(_BytesSource("x", data), fmt) if finite else Stream(BuiltinSource("pcg64", 7), fmt)

    def run(ex):
        with ex:
            outs, complete, _, _ = run_plan(stream(), plan, ex)
        assert complete
        return [[None if rs is None else [(r.statistic, r.p_value, r.p_left) for r in rs] for rs in o.results]
                for o in outs]

    assert run(DaskExecutor(client=client)) == run(Executor(1))


def test_killed_worker_is_survived(client, tmp_path):
    f = SeedFactory.from_options(factory=KillOnce(tmp_path / "killed", 41))
    r = run_sweep(SEEDS, f, options=FAST, client=client)
    assert (tmp_path / "killed").exists()  # a worker really died mid-task
    assert not r.incomplete
    ref = run_sweep(SEEDS, SeedFactory.from_options(factory=sound), options=FAST, workers=1)
    assert _comparable(r) == _comparable(ref)


@pytest.mark.slow  # real worker processes killed and restarted (~12 s)
def test_task_that_keeps_killing_workers_makes_an_incomplete_report(client):
    # give up after the first death (the default is 3 retries; 0 keeps the test short)
    def set_failures(dask_scheduler, n):
        old = dask_scheduler.allowed_failures
        dask_scheduler.allowed_failures = n
        return old

    old = client.run_on_scheduler(set_failures, n=0)
    try:
        r = run_sweep(SEEDS, SeedFactory.from_options(factory=KillAlways(50)), options=FAST, client=client)
    finally:
        client.run_on_scheduler(set_failures, n=old)
    assert r.incomplete
    note = " ".join(r.notes)
    assert "incomplete run" in note and "seeds did not finish" in note
    # the seeds of the lost block are missing from the evidence
    assert r.source["bytes_read"] < len(SEEDS) * FAST.bytes_per_seed


def test_unreachable_scheduler_is_one_clear_error():
    with pytest.raises(InputError) as e:
        connect("tcp://127.0.0.1:9", timeout=1)
    assert "cannot reach the Dask scheduler" in e.value.line() and "dask scheduler" in e.value.line()


def test_missing_distributed_is_one_clear_error(monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # import now raises ImportError
    with pytest.raises(InputError, match=r"rngassay\[cluster\]"):
        DaskExecutor("tcp://127.0.0.1:8786").__enter__()
