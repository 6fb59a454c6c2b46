"""Fuzzing the capture loaders: any bytes give a Capture or an InputError, never another exception.

References: the rule is the product's contract (analyzer/errors.py, DESIGN.md): every problem
with an input file is an ``InputError``.  Valid starting points are written by
``soundfile`` (WAV) and follow the SigMF 1.x specification (metadata); ``hypothesis``
generates the damage.  A short run is part of ``make test``; ``make fuzz`` sets
TONEPAIR_FUZZ_EXAMPLES=10000 and runs only the tests marked ``fuzz``.
"""

from __future__ import annotations

import io
import json
import os
import struct
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from hypothesis import HealthCheck, given, settings, strategies as st

from analyzer.capture import open_capture
from analyzer.errors import InputError

pytestmark = pytest.mark.fuzz

EXAMPLES = int(os.environ.get("TONEPAIR_FUZZ_EXAMPLES", "60"))
FUZZ = settings(max_examples=EXAMPLES, deadline=None, derandomize=EXAMPLES <= 60,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])


def _exercise(path: Path, **kw) -> None:
    """Open and read start, middle and end; only InputError may escape."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            cap = open_capture(path, **kw)
            n = cap.n_samples
            for a in (0, n // 2, max(n - 100, 0)):
                x = cap.read(a, 100)
                # Capture.read contract (its docstring): min(a+100, n) - a samples of complex64
                assert x.dtype == np.complex64 and len(x) == min(a + 100, n) - a
        except InputError as exc:
            assert exc.line()                                     # a message the CLI can print


def _write(dirpath: Path, name: str, data: bytes) -> Path:
    p = dirpath / name
    p.write_bytes(data)
    return p


@FUZZ
@given(data=st.binary(max_size=2048), fmt=st.sampled_from(["cf32", "ci16", "ci8", "cu8"]))
def test_random_bytes_as_raw(data, fmt):
    with tempfile.TemporaryDirectory() as d:
        _exercise(_write(Path(d), "x.bin", data), rate=48e3, fmt=fmt)


@FUZZ
@given(data=st.binary(max_size=2048), ext=st.sampled_from(["wav", "flac", "sigmf-data"]))
def test_random_bytes_as_audio_or_dataset(data, ext):
    with tempfile.TemporaryDirectory() as d:
        p = _write(Path(d), f"x.{ext}", data)
        if ext == "sigmf-data":
            meta = {"global": {"core:datatype": "ci16_le", "core:sample_rate": 1e4, "core:version": "1.2.0"},
                    "captures": [{"core:sample_start": 0}], "annotations": []}
            _write(Path(d), "x.sigmf-meta", json.dumps(meta).encode())
        _exercise(p)


def _wav_bytes(n: int = 200, channels: int = 2, subtype: str = "PCM_16") -> bytes:
    buf = io.BytesIO()
    x = 0.5 * np.sin(np.arange(n * channels) * 0.1).reshape(n, channels)
    sf.write(buf, x, 8000, format="WAV", subtype=subtype)
    return buf.getvalue()


@FUZZ
@given(edits=st.lists(st.tuples(st.integers(0, 63), st.integers(0, 255)), max_size=12),
       cut=st.integers(0, 1000), subtype=st.sampled_from(["PCM_16", "FLOAT", "PCM_U8", "PCM_24"]),
       channels=st.integers(1, 3))
def test_mutated_wav_header(edits, cut, subtype, channels):
    raw = bytearray(_wav_bytes(channels=channels, subtype=subtype))
    for pos, val in edits:                       # the RIFF/fmt/data headers live in the first 44 bytes
        raw[pos] = val
    raw = raw[:max(len(raw) - cut, 0)]
    with tempfile.TemporaryDirectory() as d:
        _exercise(_write(Path(d), "h.wav", bytes(raw)))


@FUZZ
@given(fields=st.fixed_dictionaries({}, optional={
    "core:sample_rate": st.one_of(st.floats(allow_nan=True), st.integers(-5, 10**20), st.text(max_size=4),
                                  st.none()),
    "core:datatype": st.one_of(st.sampled_from(["cf32_le", "ci16_le", "cu8", "ri16_be", "cf64_be", "cf16_le",
                                                 "ci8", "rf32", "bogus"]), st.text(max_size=6), st.integers()),
    "core:num_channels": st.one_of(st.integers(-2, 5), st.floats(), st.text(max_size=3)),
    "core:offset": st.one_of(st.integers(-10, 10**12), st.floats()),
    "core:trailing_bytes": st.one_of(st.integers(-10, 5000), st.floats()),
    "core:sha512": st.one_of(st.text(max_size=8), st.integers()),
    "core:dataset": st.one_of(st.text(max_size=8), st.just("../x.sigmf-data"), st.integers()),
    "core:metadata_only": st.booleans(),
    "core:version": st.one_of(st.just("1.2.0"), st.text(max_size=5)),
}), captures=st.lists(st.dictionaries(
    st.sampled_from(["core:sample_start", "core:header_bytes", "core:frequency", "core:datetime"]),
    st.one_of(st.integers(-100, 10**6), st.floats(), st.text(max_size=4), st.none())), max_size=3),
    annotations=st.lists(st.dictionaries(
        st.sampled_from(["core:sample_start", "core:sample_count", "core:label"]),
        st.one_of(st.integers(-100, 10**7), st.floats(), st.text(max_size=4))), max_size=3),
    drop=st.sets(st.sampled_from(["global", "captures", "annotations"]), max_size=1),
    nbytes=st.integers(0, 600))
def test_random_sigmf_metadata(fields, captures, annotations, drop, nbytes):
    doc = {"global": fields, "captures": captures, "annotations": annotations}
    for k in drop:
        doc.pop(k)
    with tempfile.TemporaryDirectory() as d:
        _write(Path(d), "m.sigmf-data", bytes(range(256)) * 2 + bytes(nbytes % 89))
        meta = _write(Path(d), "m.sigmf-meta", json.dumps(doc).encode())
        _exercise(meta)


_GOOD_META = json.dumps({"global": {"core:datatype": "cf32_le", "core:sample_rate": 48000, "core:version": "1.2.0",
                                    "core:num_channels": 1},
                         "captures": [{"core:sample_start": 0, "core:frequency": 1e6}],
                         "annotations": [{"core:sample_start": 0, "core:sample_count": 50}]}).encode()


@FUZZ
@given(edits=st.lists(st.tuples(st.integers(0, len(_GOOD_META) - 1), st.integers(0, 255)), min_size=1,
                      max_size=6), cut=st.integers(0, 40))
def test_mutated_sigmf_metadata_bytes(edits, cut):
    raw = bytearray(_GOOD_META)
    for pos, val in edits:
        raw[pos] = val
    raw = raw[:len(raw) - cut]
    with tempfile.TemporaryDirectory() as d:
        _write(Path(d), "g.sigmf-data", np.arange(400, dtype="<f4").tobytes())
        _exercise(_write(Path(d), "g.sigmf-meta", bytes(raw)))


def test_random_wav_header_fields():
    """Header fields set to extreme values (struct-packed), not just random bytes."""
    base = bytearray(_wav_bytes())
    # RIFF/WAVE layout: channels at byte 22, sample rate at 24, bits per sample at 34, data size at 40
    bad = []
    for off, fmt, val in [(22, "<H", 0), (22, "<H", 65535), (24, "<I", 0), (24, "<I", 2**32 - 1),
                          (34, "<H", 0), (34, "<H", 7), (40, "<I", 2**32 - 1), (40, "<I", 0), (4, "<I", 0)]:
        raw = bytearray(base)
        struct.pack_into(fmt, raw, off, val)
        bad.append(bytes(raw))
    with tempfile.TemporaryDirectory() as d:
        for i, raw in enumerate(bad):
            _exercise(_write(Path(d), f"w{i}.wav", raw))
    # 9 variants were tried (count of the list above)
    assert len(bad) == 9
