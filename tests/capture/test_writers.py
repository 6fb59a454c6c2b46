"""Tests of analyzer.writers against outside references: the sigmf package's
validator and reader, hashlib, soundfile and numpy.fromfile."""

from __future__ import annotations

import hashlib
import json
import warnings

import numpy as np
import pytest
import sigmf
import soundfile as sf
from sigmf import sigmffile, validate

from analyzer import capture
from analyzer.errors import CaptureWarning, InputError
from analyzer.synth import SynthParams, synthesize


def _synth(**kw):
    kw.setdefault("symbols_per_burst", 200)
    return synthesize(SynthParams(**{"continuous_phase": False, **kw}))


def _no_temp_files(folder) -> int:
    return sum(1 for p in folder.iterdir() if p.name.endswith(".tmp"))


def test_sigmf_output_passes_sigmf_validator(tmp_path):
    res = _synth()
    meta = capture.write_sigmf(tmp_path / "v", res.samples, 80e3, centre_hz=868.3e6, truth=res.truth,
                               description="unit test")
    doc = json.loads(meta.read_text())
    with warnings.catch_warnings():
        warnings.simplefilter("error")          # an undeclared namespace would warn in sigmf
        validate.validate(doc)                  # reference: sigmf package's schema validator
        rec = sigmffile.fromfile(str(meta))     # reference: sigmf reader; raises on a bad core:sha512
    rec.validate()
    g = doc["global"]
    # reference: hashlib SHA-512 of the dataset file (SigMF 1.x core:sha512)
    assert g["core:sha512"] == hashlib.sha512((tmp_path / "v.sigmf-data").read_bytes()).hexdigest()
    assert g["core:version"] == sigmf.__specification__
    assert g["core:sample_rate"] == pytest.approx(80e3, rel=0)
    assert doc["captures"][0]["core:frequency"] == pytest.approx(868.3e6, rel=0)
    assert doc["captures"][0]["core:sample_start"] == 0
    assert g["core:extensions"] == [{"name": "tonepair", "version": "0.1.0", "optional": True}]
    assert (g["core:recorder"], g["core:description"]) == ("tonepair synth", "unit test")
    assert g["tonepair:truth"]["noise_sigma"] == pytest.approx(res.truth["noise_sigma"], rel=1e-15)
    # reference: sigmf read_samples gives back the samples to float32 precision
    assert np.max(np.abs(rec.read_samples() - res.samples)) <= 2 * np.finfo(np.float32).eps
    assert _no_temp_files(tmp_path) == 0


def test_ci16_scaling_and_clipping(tmp_path):
    x = np.array([0.5 + 0.25j, -0.5j, 1.5 - 2.0j, 1 / 32768 + 0j])
    with pytest.warns(CaptureWarning, match="2 of 8"):
        capture.write_sigmf(tmp_path / "q", x, 1e3, datatype="ci16_le")
    stored = np.fromfile(tmp_path / "q.sigmf-data", dtype="<i2")      # reference: numpy.fromfile
    # round(32768 x) clipped to +-32767, I then Q (SigMF ci16_le interleaving)
    assert stored.tolist() == [16384, 8192, 0, -16384, 32767, -32767, 1, 0]


def test_real_sigmf_datatype_is_rf32(tmp_path):
    x = np.cos(np.arange(100) * 0.3) * 0.5
    meta = capture.write_sigmf(tmp_path / "r", x, 8e3, datatype="rf32_le")
    rec = sigmffile.fromfile(str(meta))                                 # reference: sigmf reader
    assert np.max(np.abs(rec.read_samples() - x)) <= np.finfo(np.float32).eps
    with pytest.raises(InputError, match="complex samples"):
        capture.write_sigmf(tmp_path / "r2", x + 0j, 8e3, datatype="rf32_le")


@pytest.mark.parametrize("fmt,np_dt,full,bias", [("cf32", "<f4", 1.0, 0.0), ("ci16", "<i2", 32768.0, 0.0),
                                                 ("ci8", "i1", 128.0, 0.0), ("cu8", "u1", 128.0, 127.5)])
def test_raw_encoding_against_numpy_fromfile(tmp_path, fmt, np_dt, full, bias):
    rng = np.random.default_rng(11)
    x = 0.9 * (rng.uniform(-1, 1, 500) + 1j * rng.uniform(-1, 1, 500)) / np.sqrt(2)
    p = capture.write_raw(tmp_path / f"a.{fmt}", x, fmt)
    stored = np.fromfile(p, dtype=np_dt).astype(np.float64)             # reference: numpy.fromfile
    got = (stored[0::2] + 1j * stored[1::2] - bias * (1 + 1j)) / full
    # within half a quantisation step per component (float32 rounding for cf32)
    tol = 0.5 / full if fmt != "cf32" else np.finfo(np.float32).eps
    assert np.max(np.abs(got.real - x.real)) <= tol + 1e-12
    assert np.max(np.abs(got.imag - x.imag)) <= tol + 1e-12
    assert p.stat().st_size == 500 * 2 * np.dtype(np_dt).itemsize


def test_cu8_clipping_warns(tmp_path):
    with pytest.warns(CaptureWarning, match="clipped"):
        p = capture.write_raw(tmp_path / "c.cu8", np.array([2.0 - 2.0j, 0j]), "cu8")
    # reference: numpy.fromfile; 0..255 limits of unsigned bytes, mid-point 127.5 rounds to even 128
    assert np.fromfile(p, dtype="u1").tolist() == [255, 0, 128, 128]


@pytest.mark.parametrize("writer", ["sigmf", "audio", "raw"])
def test_existing_output_needs_overwrite(tmp_path, writer):
    x = np.exp(1j * np.arange(64) * 0.1) * 0.5

    def write(overwrite, scale=1.0):
        if writer == "sigmf":
            return capture.write_sigmf(tmp_path / "o", x * scale, 1e3, overwrite=overwrite)
        if writer == "audio":
            return capture.write_audio(tmp_path / "o.wav", x * scale, 8000, overwrite=overwrite)
        return capture.write_raw(tmp_path / "o.cf32", x * scale, overwrite=overwrite)

    first = write(False)
    data = {"sigmf": tmp_path / "o.sigmf-data", "audio": first, "raw": first}[writer]
    before = data.read_bytes()
    with pytest.raises(InputError, match="already exists") as ei:
        write(False, scale=0.5)
    assert "--overwrite" in ei.value.hint and ei.value.path.startswith(str(tmp_path / "o"))
    assert data.read_bytes() == before                                   # untouched
    write(True, scale=0.5)
    # reference: the stored file after overwriting holds the new (halved) samples
    if writer == "audio":
        got, _ = sf.read(first, always_2d=True)                          # soundfile
        peak = np.max(np.abs(got))
    else:
        peak = np.max(np.abs(np.fromfile(data, dtype="<c8")))            # numpy.fromfile
    assert peak == pytest.approx(0.25, abs=1e-6)
    assert _no_temp_files(tmp_path) == 0


def test_audio_writer_rules(tmp_path):
    x = np.exp(1j * np.arange(256) * 0.2) * 0.5
    with pytest.raises(InputError, match="PCM_16, PCM_24"):
        capture.write_audio(tmp_path / "a.flac", x, 8000, subtype="FLOAT")
    with pytest.raises(InputError, match=r"\.wav or \.flac"):
        capture.write_audio(tmp_path / "a.ogg", x, 8000)
    p = capture.write_audio(tmp_path / "a.flac", x, 8000, truth={"k": np.float64(1.5), "bad": float("inf")})
    info = sf.info(str(p))                                               # reference: soundfile
    assert (info.channels, info.samplerate, info.subtype, info.format) == (2, 8000, "PCM_24", "FLAC")
    side = tmp_path / "a.flac.truth.json"
    # JSON has no infinity: non-finite values are stored as null (RFC 8259)
    assert json.loads(side.read_text()) == {"k": 1.5, "bad": None}
    capture.write_audio(tmp_path / "a.flac", x.real, 8000, overwrite=True)
    assert sf.info(str(p)).channels == 1
    assert not side.exists()                 # stale truth of the old file removed


def test_pcm_clipping_warns(tmp_path):
    with pytest.warns(CaptureWarning, match="clipped"):
        p = capture.write_audio(tmp_path / "c.wav", np.array([1.5, -0.5, -3.0]), 8000, subtype="PCM_16")
    got, _ = sf.read(p)                                                  # reference: soundfile
    assert np.max(np.abs(got - np.array([32767, -16384, -32768]) / 32768)) <= 1 / 32768


def test_a_folder_that_cannot_be_made_is_an_input_error_and_leaves_nothing(tmp_path):
    # a folder below a plain file cannot exist (POSIX: ENOTDIR); the error names the folder, not a traceback
    (tmp_path / "plain").write_text("x")
    with pytest.raises(InputError) as exc:
        capture.write_raw(tmp_path / "plain" / "sub" / "x.cf32", np.ones(8, complex))
    assert "cannot create the output folder" in exc.value.problem
    assert exc.value.path == str(tmp_path / "plain" / "sub")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plain"]          # no temporary file left


def test_a_failed_fill_leaves_neither_target_nor_temporary_file(tmp_path):
    # atomic replace (POSIX rename): the old file stays whole when writing the new one fails
    target = tmp_path / "keep.bin"
    target.write_bytes(b"old")

    def fail(tmp):
        tmp.write_bytes(b"half")
        raise RuntimeError("disk full")

    with pytest.raises(RuntimeError):
        capture.replace_atomically(target, fail)
    assert target.read_bytes() == b"old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.bin"]
