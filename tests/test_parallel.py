"""Where the work runs changes nothing: one worker, two local worker processes and a Dask cluster
give the same bytes; a cluster that does not answer is refused in one line, with nothing written.

The rule under test is the project's own (DEVELOPERS.md, "Reproducibility"): every replicate comes
from its seeded block, and results are put together in a fixed order.
"""

from __future__ import annotations

import builtins
import importlib
import json
import pickle
import socket
import threading
import time
from contextlib import contextmanager
from multiprocessing.shared_memory import SharedMemory

import numpy as np
import pytest
from typer.testing import CliRunner

from simulator import InputError, read_scenario, run
from simulator.cli import app
from simulator.account.outputs import render_files

from test_sites import SITES_TOML, correlated_sites

run_module = importlib.import_module("simulator.tasks.plan")
pool = importlib.import_module("simulator.execution.pool")
shared_memory = importlib.import_module("simulator.execution.shared_memory")
dask_cluster = importlib.import_module("simulator.execution.dask_cluster")
choose = importlib.import_module("simulator.execution.choose")
report = importlib.import_module("simulator.account.report")

COMPARED = ("summary.json", "cutoffs.csv", "sites.csv", "stress.csv")


@pytest.fixture
def scenario_path(tmp_path, monkeypatch):
    """Three correlated sites, one with operating rules of its own; enough replicates for three
    chunks of seeded blocks, so the tasks finish in an order of their own. A validation period and a
    stress case, so each site's own checks are shared out too."""
    monkeypatch.setattr(report, "render_report", lambda result, contents: {})
    correlated_sites(7, names=("North", "South", "East"), years=4).to_csv(tmp_path / "history.csv", index=False)
    text = SITES_TOML.replace("[history]\n", '[history]\npath = "history.csv"\nvalidation_from = 2018-10-01\n')
    text = text.replace("replicates = 400", "replicates = 2100")
    text += '[[stress]]\nname = "a costlier miss"\ncost_multipliers = { miss = 1.5 }\n'

    text += ('[sites."East".operations]\ncrews_out_on = "acting"\nspoiled_on = "no_event"\n'
             "day_rate = 900\nwork = 60\n")
    (tmp_path / "s.toml").write_text(text)
    return tmp_path / "s.toml"


def _files(result) -> dict[str, bytes]:
    files = render_files(result)
    return {name: files[name] for name in COMPARED}


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
def test_one_worker_two_workers_and_a_dask_cluster_write_the_same_bytes(scenario_path, monkeypatch):
    distributed = pytest.importorskip("distributed")
    scenario = read_scenario(scenario_path)
    one = _files(run(scenario, workers=1))
    monkeypatch.setattr(run_module, "INLINE_BELOW", 0)  # share out even this small run
    monkeypatch.setattr(shared_memory, "OUT_OF_BAND_BYTES", 1)  # every array through shared memory
    used = []
    monkeypatch.setattr(pool.PoolExecutor, "close",
                        lambda self, close=pool.PoolExecutor.close: (used.append(self.workers), close(self)))
    two = _files(run(scenario, workers=2))
    assert used == [2]
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster:
        on_cluster = _files(run(scenario, cluster=cluster.scheduler_address))
    assert two == one
    assert on_cluster == one


def test_shared_inputs_reach_local_workers_through_shared_memory_read_only(monkeypatch):
    shared = {"p": np.linspace(0.0, 1.0, 20_000), "dates": np.arange(20_000).astype("datetime64[D]"),
              "small": np.arange(3), "name": "North"}
    shipped = shared_memory._InSharedMemory.make(shared)
    assert len(shipped.pickled) < 2_000  # the large arrays travel out of band
    loaded = pickle.loads(pickle.dumps(shipped)).load()  # as a worker gets and installs it
    for key in ("p", "dates", "small"):
        assert loaded[key].dtype == shared[key].dtype and np.array_equal(loaded[key], shared[key])
    assert loaded["name"] == "North"
    assert not loaded["p"].flags.writeable and not loaded["dates"].flags.writeable
    shipped.release()
    with pytest.raises(FileNotFoundError):
        SharedMemory(name=shipped.name)
    monkeypatch.setattr(shared_memory, "_room_for", lambda size: False)  # a full /dev/shm: sent as they are
    assert shared_memory._InSharedMemory.make(shared) is None


def test_progress_counts_every_site_replicate_season_once(scenario_path):
    seen = []
    run(read_scenario(scenario_path), replicates=1100, progress=lambda *args: seen.append(args))
    priced = [(done, total) for step, done, total in seen if step.startswith("replicate seasons")]
    assert priced[-1] == (3 * 1100, 3 * 1100)
    assert [d for d, _ in priced] == sorted(d for d, _ in priced)
    checked = [(done, total) for step, done, total in seen if step.startswith("checking each site")]
    assert checked == [(1, 3), (2, 3), (3, 3)]


def _closed_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_a_cluster_that_does_not_answer_is_refused_quickly_and_nothing_is_written(scenario_path, tmp_path):
    out = tmp_path / "out"
    start = time.monotonic()
    result = CliRunner().invoke(app, ["run", str(scenario_path), "--out", str(out),
                                      "--cluster", f"tcp://127.0.0.1:{_closed_port()}"])
    assert time.monotonic() - start < dask_cluster.CONNECT_TIMEOUT + 3
    assert result.exit_code == 2, result.output
    message = result.stderr.strip()
    assert len(message.splitlines()) == 1 and "Traceback" not in result.output
    assert message.startswith("error: cluster tcp://127.0.0.1:")
    assert "check the address" in message and "GONOGO_CLUSTER" in message
    assert not out.exists()


@contextmanager
def _stranger(reply: bytes | None):
    """A plain TCP server on this machine that is not Dask: it accepts, sends ``reply`` (or closes at
    once when None), and keeps serving in a thread until the test ends."""
    server = socket.socket()
    server.bind(("127.0.0.1", 0))
    server.listen(8)
    server.settimeout(0.2)
    stop = threading.Event()

    def serve() -> None:
        while not stop.is_set():
            try:
                connection, _ = server.accept()
            except OSError:
                continue
            with connection:
                if reply is not None:
                    connection.sendall(reply)
                    stop.wait(0.5)

    thread = threading.Thread(target=serve, daemon=True)
    thread.start()
    try:
        yield server.getsockname()[1]
    finally:
        stop.set()
        thread.join(timeout=5)
        server.close()


@pytest.mark.parametrize("reply", [b"HTTP/1.1 200 OK\r\nContent-Length: 5\r\n\r\nhello", b"\x00" * 16, None],
                         ids=["web server", "zeros", "closes at once"])
def test_a_server_that_is_not_dask_is_refused_in_one_line_without_waiting(scenario_path, tmp_path, reply):
    # issue 16 item 6: before, Dask read the first 8 bytes of a web server's answer as a message
    # length (3 EiB), and a traceback and a 10 s wait followed the error line
    out = tmp_path / "out"
    with _stranger(reply) as port:
        start = time.monotonic()
        result = CliRunner().invoke(app, ["run", str(scenario_path), "--out", str(out),
                                          "--cluster", f"tcp://127.0.0.1:{port}"])
        elapsed = time.monotonic() - start
    assert result.exit_code == 2, result.output
    message = result.stderr.strip()
    assert len(message.splitlines()) == 1 and "Traceback" not in result.output, result.output
    assert message.startswith(f"error: cluster tcp://127.0.0.1:{port}: the server there ")
    assert "GONOGO_CLUSTER" in message
    assert elapsed < 4, elapsed
    assert not out.exists()


def test_the_cluster_address_may_come_from_the_environment(scenario_path, tmp_path):
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["run", str(scenario_path), "--out", str(out)],
                                env={dask_cluster.CLUSTER_ENV: "tcp://127.0.0.1:notaport"})
    assert result.exit_code == 2
    assert "error: cluster tcp://127.0.0.1:notaport" in result.stderr
    assert not out.exists()


def test_without_dask_the_message_says_how_to_install_it(monkeypatch):
    real_import = builtins.__import__

    def no_dask(name, *args, **kwargs):
        if name == "distributed" or name.startswith("distributed."):
            raise ImportError(name)
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_dask)
    with pytest.raises(InputError, match=r'pip install "dask\[distributed\]"'):
        with choose.open_executor(cluster="tcp://127.0.0.1:8786"):
            pass


def test_workers_below_one_are_refused():
    with pytest.raises(InputError, match="workers must be at least 1"):
        with choose.open_executor(workers=0):
            pass


@pytest.mark.parametrize("plan", ["whole groups", "parts of groups", "chunks"])
def test_how_the_sites_are_shared_out_changes_no_byte(plan, monkeypatch):
    """More sites than one group of SUM_GROUP: a task may sum a whole group itself, send each site's
    costs, or send chunks for the sites to be put together here; the totals come out the same."""
    from simulator import history_from_frame, run_history, scenario_from_text
    from simulator.account.outputs import summary

    names = tuple(f"site {k:02d}" for k in range(run_module.SUM_GROUP + 4))
    frame = correlated_sites(3, names=names, years=2)
    scenario = scenario_from_text(SITES_TOML.replace("replicates = 400", "replicates = 1100"))
    history = history_from_frame(frame, scenario)
    baseline = summary(run_history(scenario, history))  # whole groups, one process
    real_plan = run_module._plan
    shapes = {"whole groups": dict(workers=1), "parts of groups": dict(workers=3), "chunks": dict(workers=40)}
    monkeypatch.setattr(run_module, "_plan", lambda n, c, workers, many: real_plan(n, c, **shapes[plan], many=many))
    tasks = run_module._plan(len(names), 2, 1, True)
    kinds = {"whole groups": lambda: all(t[2] is None for t in tasks) and len(tasks) == 2,
             "parts of groups": lambda: all(t[2] is None for t in tasks) and len(tasks) > 2,
             "chunks": lambda: all(t[2] is not None for t in tasks)}
    assert kinds[plan]()
    result = run_history(scenario, history)
    assert json.dumps(summary(result)) == json.dumps(baseline)


@pytest.mark.parametrize("n_sites, workers", [(1, 1), (5, 2), (20, 3), (50, 2), (200, 1), (200, 2), (200, 3), (97, 8)])
def test_the_plan_covers_every_site_and_chunk_once_and_shares_out_the_last_groups(n_sites, workers):
    """Whatever the shape, each (site, chunk) is priced by exactly one task; with many whole groups,
    the groups left over after the last full round go to every worker in parts."""
    n_chunks = 3
    tasks = run_module._plan(n_sites, n_chunks, workers, many=True)
    covered = [(k, c) for a, b, chunk in tasks for k in range(a, b)
               for c in (range(n_chunks) if chunk is None else [chunk])]
    assert sorted(covered) == [(k, c) for k in range(n_sites) for c in range(n_chunks)]
    if (n_sites, workers) == (200, 2):  # 12 groups of 16 and one of 8: the 8 go to both workers
        assert [b - a for a, b, _ in tasks] == [16] * 12 + [4, 4]


def _callbacks_running(dask_worker=None):
    from simulator.execution.dask_worker import QUIET

    return {name: dask_worker.periodic_callbacks[name].is_running() for name in QUIET}


def _report_quiet(shared, *task):
    """In a task: the callbacks once paused (the pause is made on the worker's event loop, soon)."""
    from distributed import get_worker

    deadline = time.monotonic() + 5
    while any((running := _callbacks_running(get_worker())).values()) and time.monotonic() < deadline:
        time.sleep(0.02)
    return running


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
def test_a_dask_workers_profiler_and_tick_pause_while_a_task_runs_and_start_again_after():
    # gonogo's own rule (simulator/execution/dask_worker.py): the worker's periodic callbacks are
    # distributed's (Worker.periodic_callbacks, distributed 2026.8); no published reference
    distributed = pytest.importorskip("distributed")
    from simulator.execution.dask_worker import QUIET, _OnDaskWorker

    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, distributed.Client(cluster) as client:
        before = next(iter(client.run(_callbacks_running).values()))
        during = client.submit(_OnDaskWorker(_report_quiet), None, pure=False).result()
        deadline = time.monotonic() + 5
        while (after := next(iter(client.run(_callbacks_running).values()))) != before and time.monotonic() < deadline:
            time.sleep(0.05)
    assert before == {name: True for name in QUIET}
    assert during == {name: False for name in QUIET}
    assert after == before


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
def test_results_fetched_from_the_workers_directly_are_the_same_bytes(scenario_path, monkeypatch):
    # gonogo's own rule (DEVELOPERS.md, "Reproducibility"): how results travel changes nothing
    distributed = pytest.importorskip("distributed")
    scenario = read_scenario(scenario_path)
    one = _files(run(scenario, workers=1))
    chosen = []
    real = dask_cluster._direct
    monkeypatch.setattr(dask_cluster, "_direct", lambda client: chosen.append(real(client)) or chosen[-1])
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp",
                                  dashboard_address=None) as cluster:
        on_cluster = _files(run(scenario, cluster=cluster.scheduler_address))
    assert chosen == [True]
    assert on_cluster == one
