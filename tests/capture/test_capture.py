"""Tests of analyzer.capture: every check compares with an outside reference
(the sigmf package's reader, soundfile, numpy.fromfile, scipy.signal.hilbert or
the SigMF 1.x specification), named in a comment beside it."""

from __future__ import annotations

import json
import pickle
import warnings

import numpy as np
import pytest
import scipy.signal
import soundfile as sf
from hypothesis import given, settings, HealthCheck, strategies as st
from sigmf import sigmffile

from analyzer import capture
from analyzer.capture import open_capture, read_all
from analyzer.errors import CaptureWarning, InputError
from analyzer.synth import SynthParams, synthesize

F32 = np.finfo(np.float32).eps   # one float32 rounding step (relative)


def _synth(**kw):
    kw.setdefault("symbols_per_burst", 300)
    kw.setdefault("ebn0_db", 20.0)
    return synthesize(SynthParams(**{"continuous_phase": False, **kw}))


def _write_meta(path, global_extra: dict, captures=None):
    """A hand-written SigMF 1.x metadata file (the spec's three top-level objects)."""
    g = {"core:version": "1.2.0", "core:num_channels": 1}
    g.update(global_extra)
    doc = {"global": g, "captures": captures if captures is not None else [{"core:sample_start": 0}],
           "annotations": []}
    path.write_text(json.dumps(doc))
    return path


def _sigmf_read(meta_path):
    """Reference reader: the sigmf package (skip_checksum=False checks core:sha512 too)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        rec = sigmffile.fromfile(str(meta_path))
    return rec, rec.read_samples()


# ----------------------------------------------------------------- SigMF round trips
def test_cf32_roundtrip_equals_sigmf_reader_and_truth(tmp_path):
    res = _synth()
    meta = capture.write_sigmf(tmp_path / "cap", res.samples, 80e3, centre_hz=433.92e6, truth=res.truth)
    cap = open_capture(meta)
    x = read_all(cap)
    rec, ref = _sigmf_read(meta)
    # reference: sigmf package's read_samples - identical float32 values
    assert np.max(np.abs(x - ref)) == pytest.approx(0.0, abs=0.0)
    # reference: numpy's complex64 rounding of the written samples (one float32 step)
    assert np.max(np.abs(x - res.samples)) <= 2 * F32 * np.max(np.abs(res.samples))
    # SigMF 1.x spec: core:sample_rate and the first segment's core:frequency
    assert cap.sample_rate_hz == pytest.approx(rec.get_global_field("core:sample_rate"), rel=0)
    assert cap.centre_hz == pytest.approx(433.92e6, rel=0)
    assert (cap.kind, cap.datatype, cap.n_samples) == ("iq", "cf32_le", len(res.samples))
    # truth read back equals what was written (JSON round trip of the synthesiser's dict)
    assert cap.truth == json.loads(json.dumps(res.truth))
    assert cap.truth["noise_sigma"] == pytest.approx(res.truth["noise_sigma"], rel=1e-15)


def test_ci16_roundtrip_within_one_lsb(tmp_path):
    res = _synth(ebn0_db=30.0)          # little noise: no clipping at 0.25 full scale
    meta = capture.write_sigmf(tmp_path / "i16", res.samples, 80e3, datatype="ci16_le")
    cap = open_capture(meta)
    x = read_all(cap)
    _, ref = _sigmf_read(meta)
    # reference: sigmf package's autoscaled read (x / 2**15), float32 rounding
    assert np.max(np.abs(x - ref)) <= F32
    # scaling: round(32768 x) / 32768 is within half a step, 1/65536, of x (< 1/32768 asked)
    err = np.max(np.abs(np.concatenate([x.real - res.samples.real, x.imag - res.samples.imag])))
    assert err <= 0.5 / 32768 + F32
    assert cap.datatype == "ci16_le"


def test_sigmf_opens_by_meta_data_or_base_name(tmp_path):
    res = _synth(symbols_per_burst=50)
    meta = capture.write_sigmf(tmp_path / "rec", res.samples, 80e3)
    caps = [open_capture(p) for p in (meta, tmp_path / "rec.sigmf-data", tmp_path / "rec")]
    # reference: the sigmf package's sample count for the same recording
    rec, _ = _sigmf_read(meta)
    for c in caps:
        assert c.n_samples == rec.sample_count
        assert c.data_path == tmp_path / "rec.sigmf-data"
        assert np.max(np.abs(read_all(c) - read_all(caps[0]))) == 0.0


@pytest.fixture(scope="module")
def long_ci16(tmp_path_factory):
    d = tmp_path_factory.mktemp("blocks")
    rng = np.random.default_rng(7)
    raw = rng.integers(-32768, 32768, size=(20011, 2), dtype=np.int16)
    raw.tofile(d / "b.sigmf-data")
    meta = _write_meta(d / "b.sigmf-meta", {"core:datatype": "ci16_le", "core:sample_rate": 1e6})
    rec, ref = _sigmf_read(meta)
    return open_capture(meta), ref


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(start=st.integers(-100, 20100), count=st.integers(0, 5000))
def test_memmap_block_reads_equal_sigmf_read_samples(long_ci16, start, count):
    cap, ref = long_ci16
    x = cap.read(start, count)
    a, b = max(0, start), min(cap.n_samples, start + count)
    # reference: sigmf package read_samples of the whole file, sliced; clipping per Capture.read docstring
    assert len(x) == max(0, b - a)
    if len(x):
        assert np.max(np.abs(x - ref[a:b])) <= F32


# every datatype against the sigmf package's reader; sigmf scales unsigned bytes as
# (x - 128)/128 while we use (x - 127.5)/128, a constant offset of 0.5/128 on I and Q.
DTYPES = [
    ("cf32_le", "<f4", 2, 0.0), ("cf32_be", ">f4", 2, 0.0), ("cf64_le", "<f8", 2, 0.0),
    ("ci32_le", "<i4", 2, 0.0), ("ci16_le", "<i2", 2, 0.0), ("ci16_be", ">i2", 2, 0.0),
    ("ci8", "i1", 2, 0.0), ("cu8", "u1", 2, 0.5 / 128), ("rf32_le", "<f4", 1, 0.0), ("ri16_le", "<i2", 1, 0.0),
]


@pytest.mark.parametrize("dt,np_dt,ncomp,offset", DTYPES)
def test_each_datatype_matches_sigmf_reader(tmp_path, dt, np_dt, ncomp, offset):
    rng = np.random.default_rng(3)
    n = 40000
    kind = np.dtype(np_dt).kind
    if kind == "f":
        comps = rng.uniform(-1, 1, (n, ncomp))
    else:
        info = np.iinfo(np.dtype(np_dt))
        comps = rng.integers(info.min, info.max, (n, ncomp), endpoint=True)
    comps.astype(np_dt).tofile(tmp_path / "d.sigmf-data")
    meta = _write_meta(tmp_path / "d.sigmf-meta", {"core:datatype": dt, "core:sample_rate": 48000})
    cap = open_capture(meta)
    _, ref = _sigmf_read(meta)
    if ncomp == 2:
        assert cap.kind == "iq"
        # reference: sigmf read_samples (plus the documented cu8 mid-point offset)
        assert np.max(np.abs(read_all(cap) - (ref + offset * (1 + 1j)))) <= 2 * F32
    else:
        assert cap.kind == "audio"
        # reference: scipy.signal.hilbert of sigmf's real samples, on a block more than
        # 2 * HILBERT_MARGIN from the file edges (white samples: agreement to ~4e-3 of
        # the rms, see the capture module docstring; tolerance 1e-2 of the rms)
        whole = scipy.signal.hilbert(ref.astype(np.float64))
        a, b = 2 * capture.HILBERT_MARGIN, 2 * capture.HILBERT_MARGIN + 5000
        assert n - b > 2 * capture.HILBERT_MARGIN
        x = cap.read(a, b - a)
        assert np.max(np.abs(x.real - ref[a:b])) <= 2 * F32
        rms = np.std(ref)
        assert np.sqrt(np.mean(np.abs(x - whole[a:b]) ** 2)) <= 1e-2 * rms


def test_header_bytes_and_segments_follow_sigmf(tmp_path):
    rng = np.random.default_rng(5)
    a = rng.integers(-128, 128, (500, 2), dtype=np.int8)
    b = rng.integers(-128, 128, (700, 2), dtype=np.int8)
    with open(tmp_path / "h.sigmf-data", "wb") as fp:
        fp.write(b"\xaa" * 100)
        fp.write(a.tobytes())
        fp.write(b"\x55" * 64)
        fp.write(b.tobytes())
        fp.write(b"\x00" * 10)
    segs = [{"core:sample_start": 0, "core:header_bytes": 100, "core:frequency": 915e6},
            {"core:sample_start": 500, "core:header_bytes": 64, "core:frequency": 915.5e6}]
    meta = _write_meta(tmp_path / "h.sigmf-meta",
                       {"core:datatype": "ci8", "core:sample_rate": 2e6, "core:trailing_bytes": 10}, segs)
    with pytest.warns(CaptureWarning, match="different core:frequency"):
        cap = open_capture(meta)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        rec = sigmffile.fromfile(str(meta))
    # reference: sigmf package reads each capture segment using its header_bytes
    ref0, ref1 = rec.read_samples_in_capture(0), rec.read_samples_in_capture(1)
    assert cap.n_samples == 1200 == len(ref0) + len(ref1)
    assert np.max(np.abs(cap.read(0, 500) - ref0)) <= F32
    assert np.max(np.abs(cap.read(500, 700) - ref1)) <= F32
    # a block across the segment boundary is the two segments joined
    assert np.max(np.abs(cap.read(450, 100) - np.concatenate([ref0[450:], ref1[:50]]))) <= F32
    # SigMF spec: the first segment's core:frequency is the centre
    assert cap.centre_hz == pytest.approx(915e6, rel=0)


def test_checksum_mismatch_warns_and_still_reads(tmp_path):
    res = _synth(symbols_per_burst=50)
    capture.write_sigmf(tmp_path / "c", res.samples, 80e3)
    doc = json.loads((tmp_path / "c.sigmf-meta").read_text())
    doc["global"]["core:sha512"] = "0" * 128
    bad = tmp_path / "bad.sigmf-meta"
    bad.write_text(json.dumps(doc))
    (tmp_path / "bad.sigmf-data").write_bytes((tmp_path / "c.sigmf-data").read_bytes())
    with pytest.warns(CaptureWarning, match="checksum"):
        cap = open_capture(bad)
    # reference: numpy.fromfile of the dataset as complex64 (SigMF cf32_le)
    ref = np.fromfile(tmp_path / "bad.sigmf-data", dtype="<c8")
    assert np.max(np.abs(read_all(cap) - ref)) == 0.0


def test_sigmf_without_sample_rate_is_an_input_error(tmp_path):
    np.zeros(10, dtype="<c8").tofile(tmp_path / "n.sigmf-data")
    meta = _write_meta(tmp_path / "n.sigmf-meta", {"core:datatype": "cf32_le"})
    with pytest.raises(InputError, match="core:sample_rate") as ei:
        open_capture(meta)
    # SigMF 1.x: core:sample_rate is optional in the schema, but tonepair needs it
    assert ei.value.path == str(meta) and len(ei.value.hint) > 0


def test_invalid_sigmf_metadata_is_an_input_error(tmp_path):
    np.zeros(10, dtype="<c8").tofile(tmp_path / "v.sigmf-data")
    # SigMF 1.x schema: core:sample_rate must be a positive number
    meta = _write_meta(tmp_path / "v.sigmf-meta", {"core:datatype": "cf32_le", "core:sample_rate": -5})
    with pytest.raises(InputError, match="not valid") as ei:
        open_capture(meta)
    assert ei.value.hint.count("SigMF") == 1


# ----------------------------------------------------------------- raw files
@pytest.mark.parametrize("fmt,np_dt,step", [("ci8", "i1", 1 / 128), ("cu8", "u1", 1 / 128),
                                            ("ci16", "<i2", 1 / 32768), ("cf32", "<f4", 0.0)])
def test_raw_roundtrip_against_numpy_fromfile(tmp_path, fmt, np_dt, step):
    res = _synth(ebn0_db=40.0, symbols_per_burst=100)
    path = capture.write_raw(tmp_path / f"x.{fmt}", res.samples, fmt)
    cap = open_capture(path, rate=80e3, fmt=fmt)
    x = read_all(cap)
    stored = np.fromfile(path, dtype=np_dt).astype(np.float64)       # reference: numpy.fromfile
    if fmt == "cu8":
        stored = (stored - 127.5) / 128
    elif fmt != "cf32":
        stored = stored * step
    # stored integers, scaled as the capture module docstring says
    assert np.max(np.abs(x.real - stored[0::2])) <= F32 and np.max(np.abs(x.imag - stored[1::2])) <= F32
    # round trip: within half a quantisation step (float32 rounding for cf32)
    assert np.max(np.abs(x - res.samples)) <= np.hypot(0.5 * step, 0.5 * step) + 4 * F32
    assert cap.n_samples == len(res.samples) and cap.kind == "iq"


def test_truncated_raw_warns_and_uses_whole_samples(tmp_path):
    v = np.arange(2002, dtype="<i2")
    p = tmp_path / "t.bin"
    p.write_bytes(v.tobytes() + b"\x01\x02\x03")
    with pytest.warns(CaptureWarning, match="not a whole number"):
        cap = open_capture(p, rate=1e5, fmt="ci16")
    # 2002 int16 = 1001 ci16 samples; the 3 extra bytes are ignored (numpy.fromfile reference)
    assert cap.n_samples == 1001
    ref = np.fromfile(p, dtype="<i2", count=2002).astype(float) / 32768
    assert np.max(np.abs(read_all(cap) - (ref[0::2] + 1j * ref[1::2]))) <= F32


def test_raw_without_rate_or_format_names_the_option(tmp_path):
    p = tmp_path / "x.cf32"
    np.zeros(8, dtype="<c8").tofile(p)
    with pytest.raises(InputError, match="--rate") as e1:
        open_capture(p, fmt="cf32")
    with pytest.raises(InputError, match="--format") as e2:
        open_capture(p, rate=1e6)
    # the hint lists the formats (count of format names offered: 4)
    assert sum(f in e2.value.hint for f in capture.RAW_FORMATS) == 4
    assert "--format cf32" in e2.value.hint and e1.value.path == str(p)


def test_unknown_raw_format_is_an_input_error(tmp_path):
    p = tmp_path / "x.iq"
    np.zeros(8, dtype="<c8").tofile(p)
    with pytest.raises(InputError, match="unknown raw format") as ei:
        open_capture(p, rate=1e6, fmt="cs12")
    assert ei.value.hint.count("|") == len(capture.RAW_FORMATS) - 1


@pytest.mark.parametrize("case", ["missing", "folder", "empty", "empty_wav", "bad_wav", "bad_json", "no_data"])
def test_unusable_files_are_input_errors(tmp_path, case):
    if case == "missing":
        p = tmp_path / "nothing.sigmf-meta"
    elif case == "folder":
        p = tmp_path / "dir.cf32"
        p.mkdir()
    elif case == "empty":
        p = tmp_path / "e.cf32"
        p.write_bytes(b"")
    elif case == "empty_wav":
        p = tmp_path / "e.wav"
        p.write_bytes(b"")
    elif case == "bad_wav":
        p = tmp_path / "junk.wav"
        p.write_bytes(b"this is not audio" * 10)
    elif case == "bad_json":
        p = tmp_path / "j.sigmf-meta"
        p.write_text("{not json")
    else:
        p = _write_meta(tmp_path / "orphan.sigmf-meta", {"core:datatype": "cf32_le", "core:sample_rate": 1e3})
    before = sorted(q.name for q in tmp_path.iterdir())
    with pytest.raises(InputError) as ei:
        open_capture(p, rate=1e6, fmt="cf32")
    # each message names the file and says what to do (non-empty hint)
    assert ei.value.path == str(p) and len(ei.value.hint or "") > 0
    assert sorted(q.name for q in tmp_path.iterdir()) == before       # nothing created or removed


# ----------------------------------------------------------------- audio
@pytest.mark.parametrize("name,subtype,step", [("s16.wav", "PCM_16", 1 / 32768), ("sf.wav", "FLOAT", 0.0),
                                               ("s.flac", "PCM_16", 1 / 32768), ("s24.flac", "PCM_24", 2 ** -23)])
def test_stereo_audio_is_iq(tmp_path, name, subtype, step):
    res = _synth(sample_rate_hz=48000.0, symbol_rate_hz=1200.0, tones_hz=(-1000.0, 1200.0),
                 symbols_per_burst=100, ebn0_db=40.0)
    path = capture.write_audio(tmp_path / name, res.samples, 48000, subtype=subtype, truth=res.truth)
    cap = open_capture(path)
    x = read_all(cap)
    ref, rate = sf.read(path, dtype="float64", always_2d=True)   # reference: soundfile
    assert (cap.kind, rate, cap.sample_rate_hz) == ("iq", 48000, 48000.0)
    assert np.max(np.abs(x - (ref[:, 0] + 1j * ref[:, 1]))) <= 2 * F32
    # libsndfile's PCM conversion is within one quantisation step
    assert np.max(np.abs(x.real - res.samples.real)) <= step + 2 * F32
    assert np.max(np.abs(x.imag - res.samples.imag)) <= step + 2 * F32
    assert cap.datatype == f"{path.suffix[1:]}:{subtype}"
    assert cap.truth["signal_amplitude"] == pytest.approx(res.truth["signal_amplitude"], rel=1e-15)


def _cosine_capture(tmp_path, n=96000, fs=48000, f=1200.0, amp=0.5, phase=0.4):
    t = np.arange(n) / fs
    path = capture.write_audio(tmp_path / "mono.wav", amp * np.cos(2 * np.pi * f * t + phase), fs)
    return open_capture(path), t


def test_mono_audio_is_analytic(tmp_path):
    cap, t = _cosine_capture(tmp_path)
    assert cap.kind == "audio"
    x = read_all(cap)
    mid = slice(len(x) // 4, 3 * len(x) // 4)
    # reference: the analytic signal of A cos(wt + p) is A exp(j(wt + p)) (Hilbert transform of cos is sin)
    want = 0.5 * np.exp(1j * (2 * np.pi * 1200.0 * t + 0.4))
    assert np.max(np.abs(x[mid] - want[mid])) <= 1e-3
    # spectrum (numpy FFT, Hann window): the negative-frequency image is at least 40 dB down
    seg = x[mid] * np.hanning(len(x[mid]))
    spec = np.abs(np.fft.fft(seg)) ** 2
    freqs = np.fft.fftfreq(len(seg), 1 / 48000)
    pos = spec[np.argmin(np.abs(freqs - 1200.0))]
    neg = spec[np.argmin(np.abs(freqs + 1200.0))]
    assert 10 * np.log10(pos / neg) >= 40.0


def test_mono_block_reads_match_whole_file_hilbert(tmp_path):
    # 96000 samples hold whole periods of 1200 Hz, so the whole-file (circular)
    # transform of scipy.signal.hilbert is exact and serves as the reference.
    cap, _ = _cosine_capture(tmp_path, n=96000)
    ref, _ = sf.read(cap.data_path, dtype="float64")
    whole = scipy.signal.hilbert(ref)
    m = capture.HILBERT_MARGIN
    worst = 0.0
    # "away from the file edges" = more than 2 * HILBERT_MARGIN in (capture module docstring)
    for start in range(2 * m, cap.n_samples - 2 * m - 5000, 7919):
        worst = max(worst, np.max(np.abs(cap.read(start, 5000) - whole[start:start + 5000])))
    assert worst <= 1e-5       # documented 1e-6 plus float32 output rounding (~3e-8)


def test_capture_survives_pickling(tmp_path):
    res = _synth(symbols_per_burst=50)
    cap = open_capture(capture.write_sigmf(tmp_path / "p", res.samples, 80e3))
    again = pickle.loads(pickle.dumps(cap))
    # reference: numpy.fromfile of the cf32_le dataset
    ref = np.fromfile(tmp_path / "p.sigmf-data", dtype="<c8")
    assert np.max(np.abs(again.read(100, 200) - ref[100:300])) == 0.0
