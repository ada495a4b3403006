"""The output folder holds one whole result set at a time, and a folder the results could not go to
is refused before any work.

The rules are the project's own (issue 16, items 1 and 2; STYLE.md section 1: "a result set
written whole to a staging folder and swapped in, so a reader sees the old set or the new one,
never a mix"). The atomic exchange is Linux's ``renameat2(2)`` with ``RENAME_EXCHANGE`` (its manual
page: "Atomically exchange oldpath and newpath"); the refusals follow STYLE.md section 4 (one line,
exit status 2, no traceback). Common practice, no single source.
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import shutil
import stat
import subprocess
import sys
import tempfile
import threading
from pathlib import Path

import pytest
from typer.testing import CliRunner

from simulator.account import result_set
from simulator.cli import app
from simulator.inputs.errors import InputError
from simulator.account.out_folder import STAGING_PREFIX, check_out_folder
from simulator.account.result_set import MANIFEST, write_files

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[1]


def gonogo(*args):
    return runner.invoke(app, [str(a) for a in args])


def assert_one_line(result, *fragments):
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit), result.exception
    message = result.stderr.strip()
    assert len(message.splitlines()) == 1, message
    assert message.startswith("error: ") and "Traceback" not in result.output
    for fragment in fragments:
        assert fragment in message, f"{fragment!r} not in {message!r}"
    return message


def snapshot(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` (hidden ones too), by relative name."""
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def leftovers(parent: Path) -> list[str]:
    return sorted(p.name for p in parent.iterdir() if p.name.startswith(STAGING_PREFIX))


def result(generation: int, stress: bool = False) -> dict[str, bytes]:
    """A stand-in result set whose every file names its generation."""
    files = {name: f"generation {generation}: {name}\n".encode()
             for name in ("summary.json", "cutoffs.csv", "report.html", "figures/season_cost.png")}
    if stress:
        files.update({name: f"generation {generation}: {name}\n".encode()
                      for name in ("stress.csv", "selection.csv", "figures/stress.png")})
    return files


@pytest.fixture
def without_report(monkeypatch):
    """Skip drawing the report's figures where the test is about the folder, not the report."""
    from simulator.account import report

    monkeypatch.setattr(report, "render_report", lambda result, contents: {}, raising=False)


@pytest.fixture
def good(write_history, write_scenario, history_frame):
    write_history(history_frame)
    return write_scenario()


@pytest.fixture
def never_runs(monkeypatch):
    """The run itself fails the test: a refused folder must be refused before any work."""
    import simulator.cli as cli

    def run(*args, **kwargs):
        raise AssertionError("the simulation ran before the output folder was checked")

    monkeypatch.setattr(cli, "run", run)


# ------------------------------------------------------------------------------------------------
# one whole result set at a time


def test_a_new_result_set_replaces_the_old_one_whole_and_keeps_the_users_files(tmp_path):
    out = tmp_path / "out"
    write_files(result(1, stress=True), out, force=False)
    (out / "notes.txt").write_text("my notes\n")
    (out / "figures" / "my_chart.png").write_bytes(b"mine")
    (out / "drafts").mkdir()
    (out / "drafts" / "memo.txt").write_text("memo\n")
    kept = (out / "notes.txt").stat().st_ino
    written = write_files(result(2), out, force=True)
    files = snapshot(out)
    assert sorted(files) == sorted([*result(2), MANIFEST, "notes.txt", "figures/my_chart.png", "drafts/memo.txt"])
    assert all(files[name] == data for name, data in result(2).items())
    assert files["notes.txt"] == b"my notes\n" and files["drafts/memo.txt"] == b"memo\n"
    assert (out / "notes.txt").stat().st_ino == kept  # the user's file itself, not a copy
    assert written == [out / name for name in result(2)]
    assert leftovers(tmp_path) == []


def test_the_manifest_lists_the_result_set(tmp_path):
    out = tmp_path / "out"
    write_files(result(1, stress=True), out, force=False)
    lines = [line for line in (out / MANIFEST).read_text().splitlines() if not line.startswith("#")]
    assert lines == list(result(1, stress=True))


def test_a_manifest_naming_paths_outside_the_folder_removes_nothing_there(tmp_path):
    out, outside = tmp_path / "out", tmp_path / "precious.txt"
    outside.write_text("keep\n")
    write_files(result(1), out, force=False)
    with (out / MANIFEST).open("a") as manifest:
        manifest.write(f"../precious.txt\n{outside}\n")
    write_files(result(2), out, force=True)
    assert outside.read_text() == "keep\n"


def test_a_reader_holding_the_folder_sees_one_generation_whatever_the_moment(tmp_path):
    """A reader that opens the folder once and reads its files through it (openat) sees one whole
    result set, even while sets are swapped in as fast as they can be written (or, holding an old
    set as it is taken away, finds its files gone and reads again: never a mix)."""
    out = tmp_path / "out"
    write_files(result(0), out, force=False)
    stop, seen, mixed = threading.Event(), [], []

    def read() -> None:
        while not stop.is_set():
            folder = os.open(out, os.O_RDONLY | os.O_DIRECTORY)
            try:
                generations = set()
                for name in result(0):
                    fd = os.open(name, os.O_RDONLY, dir_fd=folder)
                    with os.fdopen(fd, "rb") as f:
                        generations.add(f.read().split(b":")[0])
            except FileNotFoundError:  # held the old set while it was taken away: read again
                continue
            finally:
                os.close(folder)
            seen.append(generations)
            if len(generations) != 1:
                mixed.append(generations)

    reader = threading.Thread(target=read)
    reader.start()
    try:
        for generation in range(1, 40):
            write_files(result(generation), out, force=True)
    finally:
        stop.set()
        reader.join()
    assert seen and not mixed


def test_without_renameat2_the_set_is_still_replaced_whole(tmp_path, monkeypatch):
    monkeypatch.setattr(result_set, "_renameat2", lambda: None)  # as on a system without it
    out = tmp_path / "out"
    write_files(result(1, stress=True), out, force=False)
    (out / "notes.txt").write_text("mine\n")
    write_files(result(2), out, force=True)
    assert sorted(snapshot(out)) == sorted([*result(2), MANIFEST, "notes.txt"])
    assert leftovers(tmp_path) == []


def test_a_folder_that_cannot_be_renamed_is_written_in_place(tmp_path, monkeypatch):
    """The current directory inside the output folder (as a mount point would be): files are
    renamed into it one by one, the old set's extra files are removed, the user's stay."""
    out = tmp_path / "out"
    write_files(result(1, stress=True), out, force=False)
    (out / "notes.txt").write_text("mine\n")
    monkeypatch.chdir(out)
    write_files(result(2), Path("."), force=True)
    assert sorted(snapshot(out)) == sorted([*result(2), MANIFEST, "notes.txt"])
    assert leftovers(out) == [] and leftovers(tmp_path) == []
    assert not (out / "figures" / "stress.png").exists()


def test_a_mounted_output_folder_in_a_read_only_parent_is_written_in_place(tmp_path):
    """As a container's volume: the folder is a mount point (it cannot be renamed) in a read-only
    parent; the set is staged inside it and renamed into place."""
    with mounted(tmp_path / "parent", "rw") as parent, mounted(parent / "out", "rw") as out:
        subprocess.run(["mount", "-o", "remount,ro", str(parent)], check=True)
        write_files(result(1, stress=True), out, force=False)
        (out / "notes.txt").write_text("mine\n")
        write_files(result(2), out, force=True)
        assert sorted(snapshot(out)) == sorted([*result(2), MANIFEST, "notes.txt"])
        assert leftovers(out) == []


@pytest.mark.parametrize("moment", ["before", "after"])
def test_a_process_killed_at_the_swap_leaves_one_whole_set(tmp_path, moment):
    out = tmp_path / "out"
    write_files(result(1, stress=True), out, force=False)
    (out / "notes.txt").write_text("mine\n")
    old = snapshot(out)
    script = f"""
import os
from pathlib import Path
from simulator.account import result_set

exchange = result_set._exchange
def killed(a, b):
    if {moment!r} == "after":
        exchange(a, b)
    os._exit(9)  # as SIGKILL: no cleanup of any kind
result_set._exchange = killed
result_set.write_files({result(2)!r}, Path({str(out)!r}), force=True)
"""
    done = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, timeout=60)
    assert done.returncode == 9, done.stderr.decode()
    now = snapshot(out)
    if moment == "before":
        assert now == old
    else:
        new = {**result(2), "notes.txt": b"mine\n"}
        assert {k: v for k, v in now.items() if k != MANIFEST} == new
    # the killed process's staging folder is removed by the next write beside it
    assert len(leftovers(tmp_path)) == 1
    write_files(result(3), out, force=True)
    assert leftovers(tmp_path) == []
    assert snapshot(out)["notes.txt"] == b"mine\n"


@pytest.mark.parametrize("failure", [OSError(errno.EIO, "Input/output error"), KeyboardInterrupt()])
def test_a_failure_at_the_swap_leaves_the_old_set_and_nothing_beside_it(tmp_path, monkeypatch, failure):
    out = tmp_path / "out"
    write_files(result(1, stress=True), out, force=False)
    old = snapshot(out)

    def fails(a, b):
        raise failure

    monkeypatch.setattr(result_set, "_exchange", fails)
    with pytest.raises(InputError if isinstance(failure, OSError) else KeyboardInterrupt) as raised:
        write_files(result(2), out, force=True)
    if isinstance(failure, OSError):
        assert str(raised.value).startswith(f"{out}: cannot write the results there (input/output error)")
    assert snapshot(out) == old
    assert leftovers(tmp_path) == []


def test_force_over_a_run_with_stress_cases_and_a_validation_split_removes_their_files(
        write_history, write_scenario, history_frame, toml_text, tmp_path, monkeypatch):
    """Through the command line: stress.csv, selection.csv and figures/stress.png of an earlier
    run go when the new run no longer has them; a file the user added stays."""
    from simulator.account import report

    def figures_only(result, contents):  # the report's figures, as names: drawing them takes seconds
        return {f"figures/{name}.png": b"png" for name in ("season_cost", "stress")[: 1 + bool(result.stress)]}

    monkeypatch.setattr(report, "render_report", figures_only, raising=False)
    write_history(history_frame)
    stressed = toml_text(history={"path": "history.csv", "validation_from": "2022-01-01"},
                         simulation={"replicates": 60, "seed": 11})
    stressed += '\n[[stress]]\nname = "a costlier miss"\ncost_multipliers = { miss = 1.5 }\n'
    out = tmp_path / "out"
    first = gonogo("run", write_scenario(stressed, name="stressed.toml"), "--out", out, "--quiet")
    assert first.exit_code == 0, first.output
    assert {"stress.csv", "selection.csv", "figures/stress.png"} <= set(snapshot(out))
    (out / "notes.txt").write_text("mine\n")
    second = gonogo("run", write_scenario(), "--out", out, "--quiet", "--force")
    assert second.exit_code == 0, second.output
    names = set(snapshot(out))
    assert not names & {"stress.csv", "selection.csv", "figures/stress.png"}
    assert {"summary.json", "cutoffs.csv", "figures/season_cost.png", "notes.txt", MANIFEST} <= names
    assert "stress" not in json.loads((out / "summary.json").read_text())
    assert leftovers(tmp_path) == []


# ------------------------------------------------------------------------------------------------
# a full disk


@contextlib.contextmanager
def mounted(folder: Path, options: str):
    """A 1 MiB tmpfs mounted at ``folder`` for a test (needs root, and a sandbox that allows mounts)."""
    folder.mkdir()
    if os.geteuid() != 0:
        pytest.skip("mounting a small tmpfs needs root; this test runs as another user")
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size=1m,{options}", "tmpfs", str(folder)],
                          capture_output=True, text=True)
    if done.returncode != 0:
        pytest.skip(f"this machine refused to mount a tmpfs: {done.stderr.strip()}")
    try:
        yield folder
    finally:
        subprocess.run(["umount", str(folder)], check=False)


@pytest.fixture
def small_disk(tmp_path):
    with mounted(tmp_path / "disk", "rw") as disk:
        yield disk


@pytest.fixture
def read_only_disk(tmp_path):
    with mounted(tmp_path / "read-only", "ro") as disk:
        yield disk


def fill(disk: Path, leave: int) -> None:
    """Fill ``disk`` until about ``leave`` bytes are free."""
    stat = os.statvfs(disk)
    free = stat.f_bavail * stat.f_frsize
    (disk / "filler").write_bytes(b"\0" * max(0, free - leave))


def test_a_full_disk_gives_one_line_and_leaves_nothing(good, small_disk, without_report):
    fill(small_disk, 8192)
    before = snapshot(small_disk)
    out = small_disk / "out"
    message = assert_one_line(gonogo("run", good, "--out", out, "--quiet"), "no space left on the device")
    assert message == (f"error: {out}: cannot write the results there (no space left on the device); free "
                       "some space, or choose another --out. Nothing was written")
    assert snapshot(small_disk) == before  # no folder, no staging folder, no temporary file
    assert sorted(p.name for p in small_disk.iterdir()) == ["filler"]


def test_a_full_disk_over_earlier_results_leaves_them_as_they_were(good, small_disk, without_report):
    out = small_disk / "out"
    assert gonogo("run", good, "--out", out, "--quiet").exit_code == 0
    (out / "notes.txt").write_text("mine\n")
    fill(small_disk, 8192)
    before = snapshot(small_disk)
    assert_one_line(gonogo("run", good, "--out", out, "--quiet", "--force", "--seed", "5"),
                    "no space left on the device")
    assert snapshot(small_disk) == before
    assert leftovers(small_disk) == []


# ------------------------------------------------------------------------------------------------
# a folder the results could not go to: refused before any work


def test_a_read_only_file_system_is_refused_before_any_work(good, read_only_disk, never_runs):
    out = read_only_disk / "out"
    message = assert_one_line(gonogo("run", good, "--out", out))
    assert message == (f"error: {out}: cannot write the results there (the file system is read-only); "
                       "choose another --out. Nothing was written")


def test_a_parent_that_is_a_file_is_refused_before_any_work(good, tmp_path, never_runs):
    (tmp_path / "taken").write_text("a file\n")
    assert_one_line(gonogo("run", good, "--out", tmp_path / "taken" / "out"),
                    f"{tmp_path / 'taken'} is a file, not a folder; choose another --out")


def test_a_dangling_symbolic_link_is_refused_before_any_work(good, tmp_path, never_runs):
    link = tmp_path / "out"
    link.symlink_to(tmp_path / "gone")
    assert_one_line(gonogo("run", good, "--out", link, "--force"),
                    f"is a symbolic link to {tmp_path / 'gone'}, which does not exist")
    assert link.is_symlink() and not (tmp_path / "gone").exists()


def test_a_symbolic_link_to_a_folder_stays_a_link_to_the_new_results(tmp_path):
    real, link = tmp_path / "real", tmp_path / "out"
    real.mkdir()
    link.symlink_to(real)
    write_files(result(1), link, force=False)
    write_files(result(2), link, force=True)
    assert link.is_symlink() and snapshot(real)["summary.json"] == result(2)["summary.json"]


def test_a_name_too_long_for_the_file_system_is_refused_before_any_work(good, tmp_path, never_runs):
    message = assert_one_line(gonogo("run", good, "--out", tmp_path / ("x" * 300)),
                              "is 300 bytes long, more than the 255 this file system allows")
    assert len(message) < 400  # the path is cut in the middle, not quoted whole
    assert not list(tmp_path.glob("x*"))


def test_a_long_scenario_name_does_not_name_the_default_folder(
        write_history, write_scenario, history_frame, toml_text, tmp_path, monkeypatch):
    write_history(history_frame)
    # 150 letters of two bytes each: 300 bytes, more than a folder's name may have on most file
    # systems; the default folder is named after the scenario file instead, whose name fits
    scenario = write_scenario(toml_text(name="\u00e9" * 150, history={"path": "history.csv"}))
    monkeypatch.chdir(tmp_path)
    result = gonogo("run", scenario, "--replicates", 20, "--quiet")
    assert result.exit_code == 0, result.output
    assert (tmp_path / "outputs" / scenario.stem / "summary.json").exists()


def test_missing_parents_made_for_the_check_are_removed_again(tmp_path):
    check_out_folder(tmp_path / "a" / "b" / "out", force=False)
    assert list(tmp_path.iterdir()) == []


def test_a_read_only_parent_is_refused_before_any_work_for_a_user_without_root(good, history_frame):
    """Run as the user "nobody" (root writes anywhere, so root drops its rights in a child)."""
    if os.geteuid() != 0:
        pytest.skip("needs root to become the user nobody; as an ordinary user, a read-only parent "
                    "is the ordinary case")
    # the child imports the rest of the command line lazily after dropping to nobody, so nobody must
    # be able to reach this Python's packages (not so in a checkout inside a 0700 folder)
    if any(not folder.stat().st_mode & 0o001 for folder in Path(sys.prefix).resolve().parents):
        pytest.skip("the user nobody cannot reach this environment's packages (a folder above it is not "
                    "open to others)")
    base = Path(tempfile.mkdtemp(prefix="gonogo-nobody-"))  # in /tmp: pytest's own folder is 0700
    try:
        os.chmod(base, 0o755)
        shutil.copy(good, base / "scenario.toml")
        shutil.copy(good.parent / "history.csv", base / "history.csv")
        parent = base / "locked"
        parent.mkdir()
        os.chmod(parent, 0o555)
        script = f"""
import os, sys
import simulator.cli, simulator.run
os.setgid(65534)
os.setuid(65534)
sys.argv = ["gonogo", "run", {str(base / "scenario.toml")!r}, "--out", {str(parent / "out")!r}]
simulator.cli.run = lambda *a, **k: sys.exit("the simulation ran before the folder was checked")
simulator.cli.app()
"""
        done = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, text=True,
                              timeout=60)
        assert done.returncode == 2, done.stderr
        lines = done.stderr.strip().splitlines()
        assert len(lines) == 1 and "Traceback" not in done.stderr
        assert lines[0].startswith(f"error: {parent / 'out'}: cannot write the results there (permission "
                                   "denied)")
        assert list(parent.iterdir()) == []
    finally:
        shutil.rmtree(base, ignore_errors=True)


def test_the_folder_keeps_its_permissions_across_a_swap(tmp_path):
    out = tmp_path / "out"
    write_files(result(1), out, force=False)
    os.chmod(out, 0o2770)  # shared with a group, say
    (out / "drafts").mkdir(mode=0o700)
    (out / "drafts" / "memo.txt").write_text("memo\n")
    drafts = stat.S_IMODE((out / "drafts").stat().st_mode)  # 0o2700: the set-group-ID bit is inherited
    write_files(result(2), out, force=True)
    assert stat.S_IMODE(out.stat().st_mode) == 0o2770
    assert stat.S_IMODE((out / "drafts").stat().st_mode) == drafts
