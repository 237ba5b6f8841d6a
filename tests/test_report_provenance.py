"""The reproducibility block: fingerprints, seeds, command, time, versions; cautions text."""

from __future__ import annotations

import datetime as dt
import os
import platform

import numpy as np
import pytest

import shufflecheck
from shufflecheck.common.cautions import REPORT_CAUTIONS
from shufflecheck.common.errors import InputError
from shufflecheck.report.provenance import collect_provenance

UTC = dt.timezone.utc


class TestFingerprints:
    def test_sha256_test_vector(self, tmp_path):
        path = tmp_path / "abc.txt"
        path.write_bytes(b"abc")
        prov = collect_provenance([path], now=dt.datetime(2031, 1, 1, tzinfo=UTC))
        # FIPS 180-2, appendix B.1: SHA-256("abc")
        assert prov.inputs[0].sha256 == (
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        )
        assert prov.inputs[0].size_bytes == 3
        assert prov.inputs[0].path == str(path)

    def test_inputs_are_not_touched(self, tmp_path):
        path = tmp_path / "log.csv"
        path.write_bytes(b"deck\n1,2,3\n")
        os.utime(path, (1_000_000_000, 1_000_000_000))
        before = path.stat()
        collect_provenance([path])
        after = path.stat()
        assert path.read_bytes() == b"deck\n1,2,3\n"
        assert after.st_mtime == before.st_mtime and after.st_size == before.st_size

    def test_missing_input(self, tmp_path):
        with pytest.raises(InputError, match=r"cannot fingerprint input .*nope\.csv: no such file"):
            collect_provenance([tmp_path / "nope.csv"])


class TestFields:
    def test_time_in_utc_to_the_second(self):
        tz = dt.timezone(dt.timedelta(hours=-5))
        prov = collect_provenance(now=dt.datetime(2031, 4, 2, 13, 5, 7, 999, tzinfo=tz))
        assert prov.created_utc == "2031-04-02T18:05:07Z"
        with pytest.raises(InputError, match="timezone-aware"):
            collect_provenance(now=dt.datetime(2031, 4, 2))

    def test_clock_used_by_default(self):
        prov = collect_provenance()
        stamp = dt.datetime.strptime(prov.created_utc, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=UTC)
        assert abs((dt.datetime.now(UTC) - stamp).total_seconds()) < 60

    def test_seeds(self):
        assert collect_provenance(seeds=7).seeds == (("seed", 7),)
        assert collect_provenance(seeds=[1, None]).seeds == (("seed", 1), ("seed 2", None))
        assert collect_provenance(seeds={"logs": np.int64(5)}).seeds == (("logs", 5),)
        assert collect_provenance(seeds=None).seeds == ()
        for bad in (-1, 1.5, "12", True):
            with pytest.raises(InputError, match="seed"):
                collect_provenance(seeds=bad)

    def test_command_is_shell_quoted(self):
        prov = collect_provenance(command=["shufflecheck", "audit", "logs/table 7.csv"])
        assert prov.command == "shufflecheck audit 'logs/table 7.csv'"
        assert collect_provenance(command="as given").command == "as given"
        assert collect_provenance().command.startswith("shufflecheck")

    def test_versions(self):
        prov = collect_provenance()
        assert prov.tool_version == shufflecheck.__version__
        assert prov.python_version == platform.python_version()
        versions = dict(prov.library_versions)
        assert versions["numpy"] == np.__version__
        assert set(versions) == {"numpy", "scipy", "matplotlib"}
        as_json = prov.as_json()
        assert as_json["library_versions"]["numpy"] == np.__version__


class TestCautions:
    def test_standard_cautions_say_what_the_project_requires(self):
        text = " ".join(REPORT_CAUTIONS).lower()
        assert "statistical evidence" in text and "not a certification" in text
        assert "regulator" in text and "accredited test laboratories" in text
        assert "never alters" in text and "deletes" in text
