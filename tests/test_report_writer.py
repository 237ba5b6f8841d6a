"""Report folders: complete, atomic, never overwritten without force, never deleting logs."""

from __future__ import annotations

import json
import os

import pytest

from shufflecheck.common.errors import InputError
from shufflecheck.report import writer
from shufflecheck.report.document import png_size
from shufflecheck.report.writer import render_files, write_report
from tests.test_report_example import example_report


@pytest.fixture(scope="module")
def report():
    return example_report()


@pytest.fixture(scope="module")
def other_report():
    return example_report(title="A second report", with_figure=False)


def _snapshot(folder):
    return {
        str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()
    }


def _siblings(folder):
    return sorted(p.name for p in folder.parent.iterdir())


class TestWrite:
    def test_writes_complete_folder(self, tmp_path, report):
        target = tmp_path / "audit"
        result = write_report(report, target)
        assert result.folder == target
        assert sorted(result.files) == [
            "figures/distance.png",
            "report.html",
            "report.json",
            "report.md",
        ]
        files = _snapshot(target)
        assert set(files) == set(result.files)
        data = json.loads(files["report.json"])
        assert data["title"] == report.title
        assert png_size(files["figures/distance.png"]) == report.sections[0].figures[0].size
        assert files["report.md"].decode("utf-8").startswith("# How many riffles")
        assert _siblings(target) == ["audit"]  # no temporary folder left behind

    def test_rerender_is_byte_identical(self, tmp_path, report):
        write_report(report, tmp_path / "a")
        write_report(report, tmp_path / "b")
        assert _snapshot(tmp_path / "a") == _snapshot(tmp_path / "b")
        assert render_files(report) == render_files(report)

    def test_undecodable_input_name(self, tmp_path):
        # a file name that is not UTF-8 reaches Python as lone surrogates (PEP 383)
        name = os.fsdecode(b"log\xff.csv")
        try:
            (tmp_path / name).write_text("deck\n")
        except (OSError, UnicodeError):
            pytest.skip("the file system refuses non-UTF-8 names")
        report = example_report(with_figure=False, inputs=[tmp_path / name])
        write_report(report, tmp_path / "audit")
        assert "log\\udcff.csv" in (tmp_path / "audit" / "report.md").read_text("utf-8")
        data = json.loads((tmp_path / "audit" / "report.json").read_text("utf-8"))
        assert data["reproducibility"]["inputs"][0]["path"].endswith(name)

    def test_parent_must_exist(self, tmp_path, report):
        with pytest.raises(InputError, match="does not exist"):
            write_report(report, tmp_path / "missing" / "audit")

    def test_target_that_is_a_file(self, tmp_path, report):
        target = tmp_path / "audit"
        target.write_text("keep me")
        with pytest.raises(InputError, match="not a folder"):
            write_report(report, target, force=True)
        assert target.read_text() == "keep me"


class TestOverwrite:
    def test_refuses_without_force(self, tmp_path, report, other_report):
        target = tmp_path / "audit"
        write_report(report, target)
        before = _snapshot(target)
        with pytest.raises(InputError, match="exists; pass force"):
            write_report(other_report, target)
        assert _snapshot(target) == before
        assert _siblings(target) == ["audit"]

    def test_force_replaces_whole_folder(self, tmp_path, report, other_report):
        target = tmp_path / "audit"
        write_report(report, target)
        write_report(other_report, target, force=True)
        files = _snapshot(target)
        assert json.loads(files["report.json"])["title"] == "A second report"
        assert "figures/distance.png" not in files  # old files do not linger
        assert _siblings(target) == ["audit"]

    def test_never_replaces_a_folder_of_other_files(self, tmp_path, report):
        logs = tmp_path / "logs"
        logs.mkdir()
        (logs / "table7.csv").write_text("deck\n")
        with pytest.raises(InputError, match=r"refusing to replace .*table7\.csv"):
            write_report(report, logs, force=True)
        assert (logs / "table7.csv").read_text() == "deck\n"

    def test_never_replaces_a_report_folder_with_extra_files(self, tmp_path, report):
        target = tmp_path / "audit"
        write_report(report, target)
        (target / "notes.txt").write_text("mine")
        (target / "figures" / "sketch.svg").write_text("<svg/>")
        with pytest.raises(InputError, match=r"figures/sketch\.svg, notes\.txt"):
            write_report(report, target, force=True)
        assert (target / "notes.txt").read_text() == "mine"

    def test_needs_our_format_marker(self, tmp_path, report):
        target = tmp_path / "audit"
        target.mkdir()
        (target / "report.json").write_text('{"format": "something else"}')
        with pytest.raises(InputError, match="not a report folder"):
            write_report(report, target, force=True)

    def test_empty_folder_replaced_with_force(self, tmp_path, report):
        target = tmp_path / "audit"
        target.mkdir()
        with pytest.raises(InputError, match="exists"):
            write_report(report, target)
        write_report(report, target, force=True)
        assert (target / "report.html").is_file()


class TestAtomic:
    def test_failure_mid_write_leaves_nothing(self, tmp_path, report, monkeypatch):
        calls = []
        real = writer._write_file

        def failing(path, content):
            calls.append(path.name)
            if len(calls) == 3:
                raise OSError(28, "No space left on device")
            real(path, content)

        monkeypatch.setattr(writer, "_write_file", failing)
        # one line naming the folder and the cause (issue 16), no traceback
        with pytest.raises(InputError, match=r"cannot write .*audit: no space left on the device"):
            write_report(report, tmp_path / "audit")
        assert len(calls) == 3  # two files were written before the failure
        assert list(tmp_path.iterdir()) == []  # no partial folder, no temporary folder

    def test_failure_mid_write_keeps_old_report(self, tmp_path, report, other_report, monkeypatch):
        target = tmp_path / "audit"
        write_report(report, target)
        before = _snapshot(target)
        calls = []
        real = writer._write_file

        def failing(path, content):
            calls.append(path)
            if len(calls) == 2:
                raise OSError(5, "Input/output error")
            real(path, content)

        monkeypatch.setattr(writer, "_write_file", failing)
        with pytest.raises(InputError, match="input/output error"):
            write_report(other_report, target, force=True)
        assert _snapshot(target) == before
        assert _siblings(target) == ["audit"]

    def test_failure_at_the_swap_restores_old_report(
        self, tmp_path, report, other_report, monkeypatch
    ):
        target = tmp_path / "audit"
        write_report(report, target)
        before = _snapshot(target)
        real_rename = os.rename

        def rename(src, dst):
            if str(src).endswith(".incomplete") and str(dst) == str(target):
                raise OSError(16, "Device or resource busy")
            real_rename(src, dst)

        monkeypatch.setattr(writer.os, "rename", rename)
        with pytest.raises(InputError, match="busy"):
            write_report(other_report, target, force=True)
        monkeypatch.undo()
        assert _snapshot(target) == before
        assert _siblings(target) == ["audit"]

    def test_rendering_error_touches_nothing(self, tmp_path, report, monkeypatch):
        def broken(_report):
            raise RuntimeError("renderer failed")

        monkeypatch.setattr(writer, "render_html", broken)
        with pytest.raises(RuntimeError):
            write_report(report, tmp_path / "audit")
        assert list(tmp_path.iterdir()) == []
