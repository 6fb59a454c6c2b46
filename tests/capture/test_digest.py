"""The SigMF checksum formed in the analysis's own pass over the file.

References: the ``sigmf`` package's ``hashing.calculate_sha512`` (the SHA-512
SigMF 1.x defines for ``core:sha512``: the whole dataset file) and
``hashlib.sha512``; the file layout of SigMF 1.x (``core:header_bytes`` per
capture segment, ``core:trailing_bytes``).
"""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys

import numpy as np
import pytest
from sigmf import hashing

from analyzer import capture, pipeline
from analyzer.errors import InputError
from analyzer import report
from analyzer.synth import SynthParams, synthesize

HINTS = dict(tones_hz=(-2500, 2500), symbol_rate_hz=5000)
MISMATCH = "does not match core:sha512"     # the warning's words
HEADERS = (64, 32)          # bytes before each of the two capture segments
TRAILING = 16


def test_file_digest_matches_sigmf_hashing_for_any_reads(tmp_path):
    rng = np.random.default_rng(4)
    path = tmp_path / "blob.bin"
    path.write_bytes(rng.integers(0, 256, 100_003, dtype=np.uint8).tobytes())
    data = path.read_bytes()
    ref = hashing.calculate_sha512(filename=path)        # reference: the sigmf package
    assert ref == hashlib.sha512(data).hexdigest()      # reference: hashlib
    for block in (1, 4096, 77_777, 1 << 24):
        assert capture.file_sha512(path, block) == ref   # exact
    # reads fed in order, overlapping, with gaps and repeats: gaps read by the digest, repeats skipped
    d = capture.FileDigest(path, block=1000)
    pos = 0
    while pos < len(data):
        a = max(0, pos - int(rng.integers(0, 50)))        # overlaps what is hashed already
        b = min(len(data), pos + int(rng.integers(1, 9000)))
        if rng.random() < 0.3:
            d.advance(b)
        else:
            d.update(a, data[a:b])
        pos = b + int(rng.integers(0, 3000))              # a gap the next update must fill first
    assert d.hexdigest() == ref                           # exact


def _write(tmp_path, name: str, datatype: str, flip: str | None = None):
    """Two bursts in a SigMF recording of two capture segments with headers and trailing bytes; its
    core:sha512 from hashlib, then (with ``flip``) one bit of the dataset changed afterwards."""
    res = synthesize(SynthParams(n_bursts=2, symbols_per_burst=300, gap_samples=5000.0, ebn0_db=12.0, seed=5))
    x = res.samples
    half = len(x) // 2
    if datatype == "cf32_le":
        parts = [x[:half].astype("<c8").tobytes(), x[half:].astype("<c8").tobytes()]
        frame = 8
    else:
        iq = np.empty(2 * len(x), "<i2")
        iq[0::2] = np.clip(np.round(x.real * 8000), -32768, 32767)
        iq[1::2] = np.clip(np.round(x.imag * 8000), -32768, 32767)
        parts = [iq[:2 * half].tobytes(), iq[2 * half:].tobytes()]
        frame = 4
    raw = bytearray(b"\x5a" * HEADERS[0] + parts[0] + b"\xa5" * HEADERS[1] + parts[1] + b"\x33" * TRAILING)
    sha = hashlib.sha512(bytes(raw)).hexdigest()
    where = {"sample": HEADERS[0] + frame * 4000, "header": 10,
             "second header": HEADERS[0] + len(parts[0]) + 5, "trailing": len(raw) - 3}
    if flip is not None:
        raw[where[flip]] ^= 1
    (tmp_path / f"{name}.sigmf-data").write_bytes(bytes(raw))
    meta = {"global": {"core:version": "1.2.0", "core:datatype": datatype, "core:sample_rate": 80e3,
                       "core:num_channels": 1, "core:trailing_bytes": TRAILING, "core:sha512": sha},
            "captures": [{"core:sample_start": 0, "core:header_bytes": HEADERS[0]},
                         {"core:sample_start": half, "core:header_bytes": HEADERS[1]}],
            "annotations": []}
    path = tmp_path / f"{name}.sigmf-meta"
    path.write_text(json.dumps(meta))
    return path


def _checksum_warnings(result):
    return [w for w in result.warnings if MISMATCH in w]


@pytest.mark.parametrize("datatype", ["cf32_le", "ci16_le"])
def test_checksum_checked_in_the_pass_detects_any_changed_byte(tmp_path, datatype):
    good = _write(tmp_path, "good", datatype)
    ref = report.build_report(pipeline.analyze(good, **HINTS))
    assert len(ref["bursts"]) == 2 and not [w for w in ref["warnings"] if MISMATCH in w]
    for block in (pipeline.QUANTUM, None):
        r = pipeline.analyze(good, block=block, **HINTS)
        assert _checksum_warnings(r) == []              # reference: hashlib digest of the file, matching
    for flip in ("sample", "header", "second header", "trailing"):
        bad = _write(tmp_path, f"bad_{flip.replace(' ', '_')}", datatype, flip)
        for block in (pipeline.QUANTUM, None):
            r = pipeline.analyze(bad, block=block, **HINTS)
            assert len(_checksum_warnings(r)) == 1, (flip, block)    # one changed bit is found
            with pytest.raises(InputError, match=MISMATCH):
                pipeline.analyze(bad, block=block, strict=True, **HINTS)
        if flip != "sample":                           # bytes the analysis does not use: same report
            rep = report.build_report(pipeline.analyze(bad, **HINTS))
            rep["warnings"] = [w for w in rep["warnings"] if MISMATCH not in w]
            assert _numbers(rep) == _numbers(ref)       # tolerance: exactly equal


def test_cf32_pass_reads_each_sample_byte_once(tmp_path, monkeypatch):
    """cf32: the digest hashes the very bytes the pass read and reads by itself only the headers and
    trailing bytes (reference: the file layout, SigMF 1.x)."""
    meta = _write(tmp_path, "once", "cf32_le")
    own = []
    real = capture.FileDigest._read_to

    def spy(self, end):
        before = self.done
        real(self, end)
        own.append(self.done - before)

    monkeypatch.setattr(capture.FileDigest, "_read_to", spy)
    r = pipeline.analyze(meta, workers=1, **HINTS)
    assert _checksum_warnings(r) == []
    assert sum(own) == sum(HEADERS) + TRAILING               # exact


def _numbers(obj, path=""):
    out = {}
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k != "path":
                out.update(_numbers(v, f"{path}/{k}"))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            out.update(_numbers(v, f"{path}/{i}"))
    elif isinstance(obj, (int, float)) and not isinstance(obj, bool):
        out[path] = float(obj)
    return out


# private modules: the size limits patched below (PARALLEL_MIN_SAMPLES, BLOCK_BYTES) and the digest's
# step, counted to show the parent hashed while the workers ran, have no public door
_WORKERS_CHECK = r"""
import json, sys
from analyzer import pipeline
from analyzer.survey import _pass as survey
from analyzer.capture import _digest as digest
from analyzer.errors import InputError
from analyzer import report
survey.PARALLEL_MIN_SAMPLES = 1           # the pass shared by workers even for this short capture
digest.BLOCK_BYTES = 4096                 # the parent hashes in many steps while they run
steps = []
real_step = digest.FileDigest.step
def step(self):
    steps.append(1)
    return real_step(self)
digest.FileDigest.step = step
kw = dict(tones_hz=(-2500, 2500), symbol_rate_hz=5000)
out = {}
for name in sys.argv[1:3]:
    for workers in (1, 2, 3):
        for block in (8192, None):
            r = pipeline.analyze(name, workers=workers, block=block, **kw)
            try:
                pipeline.analyze(name, workers=workers, block=block, strict=True, **kw)
                strict = "analysed"
            except InputError as exc:
                strict = str(exc)
            out[f"{name} {workers} {block}"] = {"report": report.build_report(r), "strict": strict}
json.dump({"runs": out, "steps": len(steps)}, open(sys.argv[3], "w"))
"""


def test_checksum_in_the_pass_is_the_same_for_any_workers_and_block(tmp_path):
    """The pass in this process beside the hashing thread (workers 1 and 2: the hashing takes a core), or
    shared by forked workers while the parent hashes the file in order (3): the same warning, the same
    strict error and the same numbers as one process (reference: the one-process run, exact).
    Run in a fresh interpreter: this test process may hold other threads, and then nothing forks."""
    good = _write(tmp_path, "good", "cf32_le")
    bad = _write(tmp_path, "bad", "cf32_le", "sample")
    out = tmp_path / "check.json"
    subprocess.run([sys.executable, "-c", _WORKERS_CHECK, str(good), str(bad), str(out)], check=True, timeout=300)
    got = json.loads(out.read_text())
    assert got["steps"] > 10                                  # the parent did hash while the workers ran
    for name, mismatch in ((str(good), False), (str(bad), True)):
        runs = [got["runs"][f"{name} {w} {b}"] for w in (1, 2, 3) for b in (8192, None)]
        for run in runs:
            assert len([w for w in run["report"]["warnings"] if MISMATCH in w]) == int(mismatch)
            assert (MISMATCH in run["strict"]) == mismatch
        first = _numbers(runs[0]["report"])
        assert len(runs[0]["report"]["bursts"]) == 2
        for run in runs[1:]:
            assert _numbers(run["report"]) == first          # tolerance: exactly equal
