"""Provenance digests: each elevation file hashed once, in the background when started early."""

import hashlib
from pathlib import Path

import pytest

from profiler.terrain.digests import FileDigests, file_sha256
from profiler.terrain.elevation import ElevationModel

SAMPLE = Path(__file__).resolve().parents[2] / "dem_samples"

# FIPS 180-2 Appendix B.1: SHA-256("abc").
ABC_SHA256 = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


def test_file_sha256_matches_the_fips_example(tmp_path):
    path = tmp_path / "abc.bin"
    path.write_bytes(b"abc")
    assert file_sha256(path) == ABC_SHA256


def test_started_and_foreground_digests_agree_with_hashlib(tmp_path):
    data = bytes(range(256)) * 40_000            # 10 MB: several read chunks
    started, later = tmp_path / "a.bin", tmp_path / "b.bin"
    started.write_bytes(data)
    later.write_bytes(data[::-1])
    digests = FileDigests()
    digests.start([started, tmp_path, tmp_path / "missing.tif"])   # a folder and a missing path are skipped
    assert digests.sha256(started) == hashlib.sha256(data).hexdigest()
    assert digests.sha256(later) == hashlib.sha256(data[::-1]).hexdigest()   # never started: hashed here
    assert digests.sha256(str(started)) == hashlib.sha256(data).hexdigest()  # same file, any spelling


def test_a_digest_is_computed_once(tmp_path):
    path = tmp_path / "a.bin"
    path.write_bytes(b"abc")
    digests = FileDigests()
    digests.start([path])
    assert digests.sha256(path) == ABC_SHA256
    path.write_bytes(b"changed")                 # the run's digest is the one of the file it read
    assert digests.sha256(path) == ABC_SHA256


def test_a_missing_file_raises_in_the_caller(tmp_path):
    with pytest.raises(OSError):
        FileDigests().sha256(tmp_path / "missing.tif")


def test_the_model_reports_each_source_with_its_digest():
    sample_dem_paths = sorted(p for p in SAMPLE.iterdir() if p.suffix == ".tif")
    digests = FileDigests()
    digests.start(sample_dem_paths)
    with ElevationModel.open(sample_dem_paths, digests=digests) as model:
        records = model.provenance(model.sources)
    assert [r["path"] for r in records] == [s.path for s in model.sources]
    for record, source in zip(records, model.sources):
        assert record["sha256"] == hashlib.sha256(open(source.file_path or source.path, "rb").read()).hexdigest()
