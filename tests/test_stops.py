"""A run ended from outside ends cleanly: Ctrl-C and SIGTERM give one line and exit status 128 +
the signal's number (130, 143, as shells report a process ended by a signal); SIGKILL, which the
process cannot see, still leaves no worker, forkserver or resource tracker running and nothing in
/dev/shm; the output folder is never left half-made.

The statuses are the shells' convention (POSIX, Shell Command Language, section 2.8.2 "Exit Status
for Commands": a command ended by a signal reports a status greater than 128; bash and dash report
128 + the signal number). The rest is the project's own rule (issue 16, item 1); common practice, no
single source.

Each test starts the real command in its own session, as a terminal would start it, and finds every
process of the run (the run's own, the forkserver, the workers, the resource tracker) by a mark in
their environment, which they all inherit, so that it finds them even after the run's process has
gone and they have been handed to another parent. The runs price 4 sites x 20,000 replicate seasons
on 2 workers, several seconds of work, and are stopped soon after the workers are there; since
starting a run (Python, its libraries, the forkserver) costs seconds, the runs of a kind run side by
side.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc and /dev/shm")

# what the gonogo script runs, with Ctrl-C handled as in a terminal's foreground job even where the
# test runner was started with it ignored (a background job of a script is), which a child inherits
ENTRY = ("import signal; signal.signal(signal.SIGINT, signal.default_int_handler); "
         "from gonogo_command import main; main()")
ROOT = Path(__file__).resolve().parents[1]
PROCESSES_OF_A_RUN = 5  # its own, the resource tracker, the forkserver and 2 workers
WITHIN = 10.0  # seconds for a stopped run to end, and for what it started to end after it


@pytest.fixture(scope="module")
def busy(tmp_path_factory) -> Path:
    """A scenario of 4 invented sites over 8 years, 20,000 replicate seasons: seconds of pricing."""
    folder = tmp_path_factory.mktemp("busy")
    rng = np.random.default_rng(20270415)
    dates = pd.date_range("2016-01-01", "2023-12-31", freq="D").strftime("%Y-%m-%d")
    frames = []
    for k in range(4):
        p = np.round(rng.uniform(0, 1, dates.size), 2)
        frames.append(pd.DataFrame({"date": dates, "site": f"depot {k}", "probability": p,
                                    "outcome": (rng.uniform(size=dates.size) < p).astype(int)}))
    pd.concat(frames).to_csv(folder / "history.csv", index=False)
    (folder / "busy.toml").write_text('name = "busy"\n[history]\npath = "history.csv"\nsite_column = "site"\n'
                                      "[costs]\nhit = 300\nfalse_alarm = 1800\nmiss = 2500\n"
                                      "[simulation]\nreplicates = 20000\nseed = 3\n")
    return folder / "busy.toml"


class Run:
    """``gonogo run`` started in its own session, its processes marked in their environment."""

    def __init__(self, scenario: Path, out: Path):
        self.mark = uuid.uuid4().hex
        self.out = out
        env = dict(os.environ, GONOGO_TEST_RUN=self.mark)
        self.process = subprocess.Popen(
            [sys.executable, "-c", ENTRY, "run", str(scenario), "--out", str(out), "--quiet", "--workers", "2"],
            cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True)
        self.started = time.monotonic()
        self.shared: set[str] = set()

    def processes(self) -> list[int]:
        """Every live process with this run's mark (zombies, already ended, are not counted)."""
        found = []
        for name in os.listdir("/proc"):
            if not name.isdigit():
                continue
            try:
                environ = Path(f"/proc/{name}/environ").read_bytes()
                state = Path(f"/proc/{name}/stat").read_text().rsplit(")", 1)[1].split()[0]
            except OSError:
                continue
            if f"GONOGO_TEST_RUN={self.mark}".encode() in environ.split(b"\0") and state != "Z":
                found.append(int(name))
        return found

    def note_shared_memory(self) -> None:
        """The /dev/shm files the run's processes have mapped (semaphores, the shared block)."""
        for pid in self.processes():
            try:
                maps = Path(f"/proc/{pid}/maps").read_text()
            except OSError:
                continue
            self.shared |= {line.split("/dev/shm/")[1].split()[0] for line in maps.splitlines()
                            if "/dev/shm/" in line}

    def wait_for_workers(self, timeout: float = 90.0) -> None:
        while len(self.processes()) < PROCESSES_OF_A_RUN:
            assert self.process.poll() is None, self.process.communicate()[1].decode()
            assert time.monotonic() - self.started < timeout, "the workers never started"
            time.sleep(0.05)
        self.note_shared_memory()

    def stop(self, signum: int) -> None:
        self.note_shared_memory()
        self.stopped = time.monotonic()
        if signum == signal.SIGINT:  # Ctrl-C in a terminal reaches the whole process group
            os.killpg(self.process.pid, signum)
        else:
            os.kill(self.process.pid, signum)

    def end(self) -> tuple[int, str, float]:
        """The exit status, standard error, and seconds from the stop to the end."""
        try:
            _, err = self.process.communicate(timeout=WITHIN)
        except subprocess.TimeoutExpired:
            os.killpg(self.process.pid, signal.SIGKILL)
            self.process.communicate()
            pytest.fail(f"the run did not end within {WITHIN:g} s of the stop")
        return self.process.returncode, err.decode(), time.monotonic() - self.stopped

    def assert_nothing_left(self) -> None:
        """No process of the run and none of its /dev/shm files, within a few seconds."""
        deadline = time.monotonic() + WITHIN
        while True:
            alive = self.processes()
            kept = sorted(name for name in self.shared if os.path.exists(f"/dev/shm/{name}"))
            if not alive and not kept:
                break
            assert time.monotonic() < deadline, f"still there: processes {alive}, /dev/shm files {kept}"
            time.sleep(0.05)
        assert not self.out.exists()
        assert not [p for p in self.out.parent.iterdir() if p.name.startswith(".gonogo-staging-")]


def assert_one_line(err: str, start: str) -> None:
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    assert lines[0].startswith(start), err


@pytest.fixture(scope="module")
def stopped_runs(busy, tmp_path_factory) -> dict[str, tuple[Run, int, str, float]]:
    """Runs side by side (their start-up costs seconds each), each stopped in the middle at its own
    moment after its workers started: by SIGTERM, by SIGKILL, and three times by Ctrl-C."""
    folder = tmp_path_factory.mktemp("stopped")
    plan = {"sigterm": (signal.SIGTERM, 0.3), "sigkill": (signal.SIGKILL, 0.3),
            "ctrl-c 1": (signal.SIGINT, 0.0), "ctrl-c 2": (signal.SIGINT, 0.4), "ctrl-c 3": (signal.SIGINT, 1.0)}
    runs = {name: Run(busy, folder / name.replace(" ", "-")) for name in plan}
    for name, run in runs.items():
        run.wait_for_workers()
        time.sleep(plan[name][1])
        run.stop(plan[name][0])
    return {name: (run, *run.end()) for name, run in runs.items()}


def test_sigterm_in_the_middle_of_a_run_ends_it_and_its_workers(stopped_runs):
    run, status, err, took = stopped_runs["sigterm"]
    assert run.shared, "the run mapped nothing from /dev/shm: the test would prove nothing"
    assert status == 128 + signal.SIGTERM, err
    assert_one_line(err, "stopped by SIGTERM: the run did not finish and the output folder is as it was")
    assert took < WITHIN
    run.assert_nothing_left()


def test_sigkill_of_a_run_leaves_no_worker_forkserver_or_tracker_and_nothing_in_dev_shm(stopped_runs):
    run, status, err, _ = stopped_runs["sigkill"]
    assert status == -signal.SIGKILL
    assert err == ""  # not even the resource tracker's warnings about what it frees
    run.assert_nothing_left()


@pytest.mark.parametrize("name", ["ctrl-c 1", "ctrl-c 2", "ctrl-c 3"])
def test_ctrl_c_in_the_middle_of_a_run_ends_it_within_seconds_with_one_line(stopped_runs, name):
    run, status, err, took = stopped_runs[name]
    assert status == 128 + signal.SIGINT, err
    assert_one_line(err, "stopped by Ctrl-C (SIGINT): the run did not finish and the output folder is as it was")
    assert took < WITHIN
    run.assert_nothing_left()


def test_ctrl_c_during_start_up_ends_with_one_line_and_no_traceback(busy, tmp_path):
    """Runs stopped while Python loads the command, while it reads the inputs, and while the
    forkserver and the workers start (the moments depend on the machine; each must be clean)."""
    runs = [Run(busy, tmp_path / f"out{i}") for i in range(4)]
    for run, delay in zip(runs, (0.2, 0.8, 1.6, 2.6)):
        time.sleep(max(0.0, run.started + delay - time.monotonic()))
        run.stop(signal.SIGINT)
    for run in runs:
        status, err, _ = run.end()
        assert status == 128 + signal.SIGINT, err
        assert_one_line(err, "stopped by Ctrl-C (SIGINT)")
        run.assert_nothing_left()
