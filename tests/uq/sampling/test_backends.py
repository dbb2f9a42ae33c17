"""Executors for the engine's map/reduce seam: argument checks, result order, and numbers that
do not depend on the executor (the reference is the serial run of the same plan)."""
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from uq.errors import InputError
from uq.sampling import backends
from uq.sampling.engine import CountReducer, MultiReducer, SumReducer, stream
from uq.sampling.plans import SampleDesign


_ROOT = Path(__file__).resolve().parents[3]


def _square(x):
    return x * x


def _model(u):
    # a smooth and a discontinuous output of the unit points (no physics needed here)
    return {"y": np.sum(u ** 2, axis=1), "hit": np.prod(u, axis=1) <= 0.1}


def _run(executor):
    design = SampleDesign(scheme="monte-carlo", n=3000, dimension=3, seed=42, block_size=256)
    reducer = MultiReducer({"sum": SumReducer("y"), "hits": CountReducer("hit")})
    return stream(design, _model, reducer, chunk_blocks=2, executor=executor)


@pytest.mark.parametrize("bad", [0, -1, 1.5, True, "2", None])
def test_worker_count_must_be_a_positive_integer(bad):
    with pytest.raises(backends.BackendError, match="workers must be an integer >= 1"):
        with backends.local_executor(bad):
            pass
    assert issubclass(backends.BackendError, InputError)


def test_one_worker_runs_in_this_process():
    with backends.local_executor(1) as ex:
        assert ex is None


def test_process_pool_keeps_order_and_numbers():
    with backends.local_executor(2) as ex:
        assert list(ex.map(_square, range(20))) == [i * i for i in range(20)]
        pooled = _run(ex)
    serial = _run(None)
    assert pooled["hits"] == serial["hits"]
    assert pooled["sum"] == serial["sum"]  # bit-identical: same blocks, reduced in block order


def test_dask_executor_keeps_order_and_numbers():
    distributed = pytest.importorskip("distributed", reason="the [dask] extra is not installed")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster, set_as_default=False) as client:
        ex = backends.DaskExecutor(client)
        assert ex.retries == 0  # a deterministic model that raised once raises again
        assert list(ex.map(_square, range(10))) == [i * i for i in range(10)]
        on_dask = _run(ex)
        # what all tasks share is sent once: tasks carry a reference, not the object
        model = object()
        tasks = ex._scatter_shared_parts([(model, 0, 1), (model, 1, 2)])
        assert isinstance(tasks[0][0], distributed.Future) and tasks[0][0] is tasks[1][0]
        assert tasks[1][1:] == (1, 2)
    serial = _run(None)
    assert on_dask["hits"] == serial["hits"] and on_dask["sum"] == serial["sum"]


def test_dask_executor_refuses_both_an_address_and_a_local_cluster():
    with pytest.raises(backends.BackendError, match="not both"):
        with backends.dask_executor("tcp://127.0.0.1:1", local_workers=2):
            pass


def test_an_assessment_on_dask_equals_the_local_one():
    distributed = pytest.importorskip("distributed", reason="the [dask] extra is not installed")
    from pathlib import Path

    from uq.scenario import load_scenario
    from uq.studies.assess import assess

    scenario = load_scenario(Path(__file__).resolve().parents[3] / "configs" / "under_ice_section.toml")
    kw = dict(samples=512, replicates=2, sensitivity_base_n=0, block_size=128)
    local = assess(scenario, **kw)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster, set_as_default=False) as client:
        on_dask = assess(scenario, **kw, executor=backends.DaskExecutor(client))
    assert on_dask.p_success == local.p_success
    assert on_dask.propagation.mean_margin_Wh == local.propagation.mean_margin_Wh
    np.testing.assert_array_equal(on_dask.propagation.outcomes.margin_Wh,
                                  local.propagation.outcomes.margin_Wh)


def test_one_place_chooses_the_executor_and_refuses_two_choices(tmp_path):
    with backends.executor_for(workers=1) as ex:
        assert ex is None
    with pytest.raises(backends.BackendError, match="not both"):
        with backends.executor_for(scheduler="tcp://127.0.0.1:1", local_cluster=2):
            pass
    with pytest.raises(backends.BackendError, match="scheduler file .* does not exist"):
        with backends.executor_for(scheduler_file=tmp_path / "missing.json"):
            pass


@pytest.mark.slow  # starts a two-process cluster twice: ~10 s on two cores
def test_assess_and_sweep_on_a_two_worker_cluster_equal_the_local_run(tmp_path):
    distributed = pytest.importorskip("distributed", reason="the [dask] extra is not installed")
    import json
    from pathlib import Path

    from uq.scenario import load_scenario
    from uq.studies.assess import assess
    from uq.studies.sweeps import sweep_setpoint

    configs = Path(__file__).resolve().parents[3] / "configs"
    scenario = load_scenario(configs / "under_ice_section.toml")
    kw = dict(samples=1024, replicates=2, sensitivity_base_n=64, block_size=256)
    local = assess(scenario, **kw)
    local_sweep = sweep_setpoint(scenario, "setpoint.speed_m_s", [1.2, 1.5], samples=256, seed=3)
    with backends.executor_for(local_cluster=2) as ex:
        on_dask = assess(scenario, **kw, executor=ex)
        dask_sweep = sweep_setpoint(scenario, "setpoint.speed_m_s", [1.2, 1.5], samples=256,
                                    seed=3, executor=ex)
        # an HPC job finds its scheduler through the file the scheduler wrote
        path = tmp_path / "scheduler.json"
        path.write_text(json.dumps({"address": ex.client.scheduler.address}))
        with backends.executor_for(scheduler_file=path) as by_file:
            by_file_sweep = sweep_setpoint(scenario, "setpoint.speed_m_s", [1.2, 1.5],
                                           samples=256, seed=3, executor=by_file)
    assert isinstance(ex, backends.DaskExecutor) and len(distributed.__version__) > 0
    assert on_dask.p_success == local.p_success
    assert on_dask.propagation.mean_margin_Wh == local.propagation.mean_margin_Wh
    np.testing.assert_array_equal(on_dask.propagation.outcomes.margin_Wh,
                                  local.propagation.outcomes.margin_Wh)
    assert on_dask.sensitivity is not None
    for output in local.sensitivity.sobol.keys():  # the sensitivity stage ran on the cluster
        np.testing.assert_array_equal(on_dask.sensitivity.sobol[output].total,
                                      local.sensitivity.sobol[output].total)
        np.testing.assert_array_equal(on_dask.sensitivity.sobol[output].first,
                                      local.sensitivity.sobol[output].first)
    for other in (dask_sweep, by_file_sweep):
        np.testing.assert_array_equal(other.to_frame().to_numpy(),
                                      local_sweep.to_frame().to_numpy())


def test_one_blas_thread_limits_blas_only_while_the_call_runs():
    """Inside an entry point every loaded BLAS runs one thread (threadpoolctl's own report),
    and the host process's setting is back afterwards."""
    import numpy as np  # noqa: F401  (loads numpy's BLAS)
    from threadpoolctl import threadpool_info, threadpool_limits

    from uq.sampling.backends import one_blas_thread

    def blas_threads():
        return [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]

    with threadpool_limits(limits=2, user_api="blas"):
        before = blas_threads()
        inside = one_blas_thread(blas_threads)()
        after = blas_threads()
    assert inside and all(n == 1 for n in inside)
    assert after == before


class _RecordingClient:
    """Stands in for distributed.Client: records what DaskExecutor sends and runs it here.
    A reference pickles as its key only, as a distributed.Future does."""

    def __init__(self):
        self.submitted, self.shipped = [], []

    def submit(self, fn, obj, pure):
        self.submitted.append(obj)
        return _Ref(len(self.submitted) - 1, fn(obj))

    def map(self, fn, tasks, retries, pure):
        import pickle

        self.shipped.extend(len(pickle.dumps(t)) for t in tasks)
        resolved = [tuple(p.value if isinstance(p, _Ref) else p for p in t) for t in tasks]
        return [_Ref(None, fn(t)) for t in resolved]

    def cancel(self, futures):
        pass


class _Ref:
    def __init__(self, key, value):
        self.key, self.value = key, value

    def result(self):
        return self.value

    def release(self):
        pass

    def __reduce__(self):
        return (int, (self.key or 0,))


def test_a_study_sends_its_model_once_and_each_task_stays_small():
    """The study of the bundled example (20 variants, 16 replicates streamed by separate map
    calls) on the Dask executor: the ~150 kB model crosses once for all replicates, and no
    task carries more than 100 kB (issue 18's target); the numbers are the local run's."""
    import dataclasses
    import pickle

    from uq.scenario.study_file import load_study
    from uq.studies.batch import run_study

    study = load_study(_ROOT / "configs" / "speed_and_battery_study.toml")
    study = dataclasses.replace(study, variants=study.variants[:3])
    client = _RecordingClient()
    on_dask = run_study(study, samples=16 * 256, executor=backends.DaskExecutor(client))
    local = run_study(study, samples=16 * 256)
    models = [o for o in client.submitted if type(o).__name__ == "_StudyModel"]
    assert len(models) == 1 and len(pickle.dumps(models[0])) > 20_000
    assert len(client.shipped) == study.replicates and max(client.shipped) <= 100_000
    pd.testing.assert_frame_equal(on_dask.to_frame(), local.to_frame())


def _blas_threads_here(_):
    import numpy as np  # noqa: F401  (loads numpy's BLAS)
    from threadpoolctl import threadpool_info

    return [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]


def test_process_pool_workers_run_one_blas_thread():
    """The pool's workers share the cores, so each keeps one BLAS thread for its life
    (threadpoolctl's own report, read inside the worker)."""
    with backends.local_executor(2) as ex:
        seen = list(ex.map(_blas_threads_here, range(4)))
    assert all(threads and all(n == 1 for n in threads) for threads in seen)
