"""Safe outputs (issue 16): atomic, exclusive without force, never an input, one-line
failures naming the path and the cause, temporaries of killed runs cleaned up."""

from __future__ import annotations

import errno
import multiprocessing
import os
import subprocess
import sys

import pytest

from shufflecheck.common import files
from shufflecheck.common.errors import InputError
from shufflecheck.common.files import (
    atomic_open,
    atomic_write,
    check_output,
    clean_temporaries,
    temporary_path,
    write_failure,
)
from tests._system import ENV, fill, small_disk, unprivileged


def _entries(folder):
    return sorted(p.name for p in folder.iterdir())


class TestAtomicWrite:
    def test_writes_and_leaves_no_temporary(self, tmp_path):
        target = atomic_write(tmp_path / "a.csv", "x,y\n")
        assert target.read_text() == "x,y\n"
        assert _entries(tmp_path) == ["a.csv"]

    def test_refuses_existing_without_force(self, tmp_path):
        target = tmp_path / "a.csv"
        target.write_text("old")
        with pytest.raises(InputError, match=r"a\.csv exists; pass force to replace it"):
            atomic_write(target, "new", force=False)
        assert target.read_text() == "old"
        atomic_write(target, "new", force=True)
        assert target.read_text() == "new"

    def test_failure_in_the_body_leaves_the_old_file(self, tmp_path):
        target = tmp_path / "a.csv"
        target.write_text("old")
        with pytest.raises(RuntimeError), atomic_open(target, force=True) as handle:
            handle.write("half")
            raise RuntimeError("interrupted")
        assert target.read_text() == "old"
        assert _entries(tmp_path) == ["a.csv"]

    def test_exclusive_when_the_name_appears_meanwhile(self, tmp_path):
        # another run creates the target after our check: ours must not replace it
        target = tmp_path / "a.csv"
        with pytest.raises(InputError, match="exists"), atomic_open(target, force=False) as out:
            out.write("ours")
            target.write_text("theirs")
        assert target.read_text() == "theirs"
        assert _entries(tmp_path) == ["a.csv"]

    def test_a_folder_in_the_way(self, tmp_path):
        (tmp_path / "a.csv").mkdir()
        for force in (False, True):
            with pytest.raises(InputError, match=r"a\.csv: it is a folder"):
                atomic_write(tmp_path / "a.csv", "x", force=force)

    def test_write_errors_name_the_target_and_the_cause(self, tmp_path, monkeypatch):
        target = tmp_path / "a.csv"
        with pytest.raises(InputError) as info, atomic_open(target) as out:
            real = out._handle.write

            def full(data):
                raise OSError(errno.ENOSPC, "No space left on device")

            monkeypatch.setattr(out._handle, "write", full)
            out.write("x")
        assert str(info.value) == f"cannot write {target}: no space left on the device"
        monkeypatch.setattr(out._handle, "write", real)
        assert _entries(tmp_path) == []

    def test_errors_of_the_callers_own_code_are_not_write_errors(self, tmp_path):
        with pytest.raises(FileNotFoundError), atomic_open(tmp_path / "a.csv"):
            open(tmp_path / "missing")
        assert _entries(tmp_path) == []


def _race(args):
    path, text, barrier = args
    barrier.wait()
    try:
        atomic_write(path, text, force=False)
    except InputError:
        return "refused"
    return "wrote"


class TestTwoRuns:
    def test_only_one_of_many_runs_wins(self, tmp_path):
        target = tmp_path / "out.csv"
        context = multiprocessing.get_context("fork")
        with context.Manager() as manager:
            barrier = manager.Barrier(6)
            with context.Pool(6) as pool:
                outcome = pool.map(_race, [(target, f"run {k}\n", barrier) for k in range(6)])
        assert sorted(outcome) == ["refused"] * 5 + ["wrote"]
        assert target.read_text() in {f"run {k}\n" for k in range(6)}
        assert _entries(tmp_path) == ["out.csv"]


class TestTemporaries:
    def test_names_are_plainly_temporaries(self, tmp_path):
        name = temporary_path(tmp_path / "log.csv").name
        assert name.startswith(".log.csv.") and name.endswith(".incomplete")
        assert str(os.getpid()) in name

    def test_left_by_a_dead_process_are_removed_by_the_next_write(self, tmp_path):
        # a process that exits at once: its pid is then free
        dead = subprocess.run(
            [sys.executable, "-c", "import os; print(os.getpid())"],
            capture_output=True,
            text=True,
            check=True,
            env=ENV,
        )
        pid = int(dead.stdout)
        stale_file = tmp_path / f".log.csv.{pid}-0123abcd.incomplete"
        stale_file.write_text("half a log")
        stale_folder = tmp_path / f".report.{pid}-89abcdef.incomplete"
        (stale_folder / "figures").mkdir(parents=True)
        alive = tmp_path / f".other.csv.{os.getpid()}-00000000.incomplete"
        alive.write_text("being written by this process")
        unrelated = tmp_path / ".notes.tmp"
        unrelated.write_text("not ours")
        atomic_write(tmp_path / "new.csv", "x")
        assert _entries(tmp_path) == sorted(["new.csv", alive.name, unrelated.name])

    def test_clean_reports_what_it_removed(self, tmp_path):
        stale = tmp_path / ".x.csv.999999999-0123abcd.incomplete"  # no such pid
        stale.write_text("")
        assert clean_temporaries(tmp_path) == [stale]


class TestCheckOutput:
    def test_refuses_an_input_even_with_force(self, tmp_path):
        log = tmp_path / "log.csv"
        log.write_text("order\n")
        link = tmp_path / "same.csv"
        os.link(log, link)
        for path in (log, link, tmp_path / "." / "log.csv"):
            with pytest.raises(InputError, match="it is the log itself, an input"):
                check_output(path, force=True, inputs={log: "the log itself"})

    def test_existing_missing_folder_and_folder(self, tmp_path):
        (tmp_path / "x.png").write_text("")
        with pytest.raises(InputError, match=r"x.png exists; pass force"):
            check_output(tmp_path / "x.png")
        assert check_output(tmp_path / "x.png", force=True) == tmp_path / "x.png"
        with pytest.raises(InputError, match=r"folder .*nowhere does not exist"):
            check_output(tmp_path / "nowhere" / "x.png")
        with pytest.raises(InputError, match="it is a folder"):
            check_output(tmp_path, force=True)
        assert _entries(tmp_path) == ["x.png"]  # the probe left nothing

    def test_size_against_the_free_space(self, tmp_path):
        with pytest.raises(InputError, match=r"it needs about .* and the disk has .* free"):
            check_output(tmp_path / "big.csv", size=1 << 62)


class TestRealFileSystems:
    def test_permission_denied(self, tmp_path):
        prefix = unprivileged()
        folder = tmp_path / "locked"
        folder.mkdir()
        folder.chmod(0o555)
        code = (
            "from shufflecheck.common.files import atomic_write\n"
            "from shufflecheck.common.errors import InputError\n"
            "try:\n"
            f"    atomic_write({str(folder / 'x.csv')!r}, 'x')\n"
            "except InputError as exc:\n"
            "    print(exc)\n"
        )
        done = subprocess.run(
            [*prefix, sys.executable, "-c", code],
            capture_output=True,
            text=True,
            env=ENV,
            check=False,
        )
        assert done.stdout.strip() == f"cannot write {folder / 'x.csv'}: permission denied"
        assert list(folder.iterdir()) == []

    def test_full_disk(self, tmp_path):
        with small_disk(tmp_path / "disk") as disk:
            fill(disk)
            with pytest.raises(InputError) as info:
                atomic_write(disk / "report.csv", "x" * 100_000)
            assert (
                str(info.value)
                == f"cannot write {disk / 'report.csv'}: no space left on the device"
            )
            assert _entries(disk) == ["filler"]

    def test_causes_in_plain_words(self):
        for number, words in [
            (errno.EACCES, "permission denied"),
            (errno.EROFS, "read-only file system"),
            (errno.ENOSPC, "no space left on the device"),
            (errno.EISDIR, "it is a folder"),
        ]:
            message = str(write_failure("reports/x", OSError(number, os.strerror(number))))
            assert message == f"cannot write reports/x: {words}"
        assert files.TEMPORARY_SUFFIXES == (".incomplete", ".replaced")
