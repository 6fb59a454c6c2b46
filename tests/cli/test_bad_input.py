"""Broken captures: each gets exit 2 and one ``error:`` line, or a ``warning:`` and a report.

References: the exit codes, the one-line ``error: FILE: problem; hint`` format, "no report
files left behind" and "inputs are never modified" are the product's documented contract
(DESIGN.md, Command line).  SigMF field meanings follow the SigMF 1.x specification; file
integrity is checked with ``hashlib``; expected values are computed with ``numpy``.
"""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest
import soundfile as sf
from typer.testing import CliRunner

from analyzer import capture
from analyzer.cli import app
from analyzer.synth import SynthParams, synthesize

runner = CliRunner()
HINTS = ["--tones", "-2500,2500", "--baud", "5000"]
FS = 80e3


def _sha(p):
    return hashlib.sha256(p.read_bytes()).hexdigest()


def _samples(**kw):
    kw.setdefault("symbols_per_burst", 400)
    kw.setdefault("ebn0_db", 14.0)
    kw.setdefault("start_offset_samples", 2000.0)
    kw.setdefault("tail_samples", 2000)
    return synthesize(SynthParams(**{"continuous_phase": False, **kw})).samples


def _run(args, out):
    return runner.invoke(app, ["analyze", *[str(a) for a in args], "--out", str(out), "--quiet"])


def _assert_error(r, out, *needles):
    """DESIGN.md contract: exit 2, exactly one stderr line ``error: ...``, no traceback, no reports."""
    assert r.exit_code == 2, (r.exit_code, r.stderr)
    lines = [ln for ln in r.stderr.splitlines() if ln.strip() and not ln.startswith("warning: ")]
    assert len(lines) == 1 and lines[0].startswith("error: "), r.stderr
    for n in needles:
        assert n in lines[0], (n, lines[0])
    assert "Traceback" not in r.stdout + r.stderr
    assert not out.exists() or not any(out.iterdir())
    return lines[0]


def _warnings(r):
    return [ln for ln in r.stderr.splitlines() if ln.startswith("warning: ")]


def _sigmf(tmp_path, x, name="cap", datatype="cf32_le"):
    return capture.write_sigmf(tmp_path / name, x, FS, datatype=datatype)


def _edit_meta(meta, fn):
    doc = json.loads(meta.read_text())
    fn(doc)
    meta.write_text(json.dumps(doc))


# ----------------------------------------------------------------- files
def test_missing_file(tmp_path):
    r = _run([tmp_path / "absent.cf32", *HINTS, "--rate", FS, "--format", "cf32"], tmp_path / "o")
    _assert_error(r, tmp_path / "o", "absent.cf32", "file not found")


def test_debug_shows_the_traceback(tmp_path):
    r = runner.invoke(app, ["--debug", "analyze", str(tmp_path / "absent.cf32"), *HINTS, "--rate", "8e4",
                            "--format", "cf32", "--out", str(tmp_path / "o")])
    # contract (DESIGN.md / cli.py): --debug adds the traceback, exit code stays 2
    assert r.exit_code == 2 and "Traceback" in r.stderr and "error: " in r.stderr


@pytest.mark.parametrize("name", ["e.cf32", "e.wav", "e.sigmf-data"])
def test_empty_file(tmp_path, name):
    p = tmp_path / name
    if name.endswith(".sigmf-data"):
        meta = _sigmf(tmp_path, np.zeros(4, np.complex64), "e")
        p.write_bytes(b"")
        p = meta
    else:
        p.write_bytes(b"")
    r = _run([p, *HINTS, "--rate", FS, "--format", "cf32"] if name.endswith(".cf32") else [p, *HINTS],
             tmp_path / "o")
    line = _assert_error(r, tmp_path / "o")
    assert "empty" in line or "no samples" in line


def test_partial_sample_is_dropped_with_a_warning(tmp_path):
    x = _samples()
    p = tmp_path / "odd.cf32"
    p.write_bytes(x.astype("<c8").tobytes() + b"\x00\x01\x02")      # 3 stray bytes
    out = tmp_path / "o"
    r = _run([p, *HINTS, "--rate", FS, "--format", "cf32"], out)
    assert r.exit_code == 0, r.stderr
    w = _warnings(r)
    assert any("not a whole number" in m and "3 bytes" in m for m in w)
    rep = json.loads((out / "odd.json").read_text())
    # numpy: len(x) whole cf32 samples (8 bytes each) precede the 3 stray bytes
    assert rep["capture"]["samples"] == len(x)
    assert any("not a whole number" in m for m in rep["warnings"])


# ----------------------------------------------------------------- SigMF metadata
def test_sigmf_without_sample_rate(tmp_path):
    meta = _sigmf(tmp_path, _samples())
    _edit_meta(meta, lambda d: d["global"].pop("core:sample_rate"))
    _assert_error(_run([meta, *HINTS], tmp_path / "o"), tmp_path / "o", "core:sample_rate", str(meta))


def test_sigmf_unknown_datatype(tmp_path):
    meta = _sigmf(tmp_path, _samples())
    # SigMF 1.x: "cs12_le" is not a datatype the spec defines, nor one tonepair reads
    _edit_meta(meta, lambda d: d["global"].update({"core:datatype": "cs12_le"}))
    line = _assert_error(_run([meta, *HINTS], tmp_path / "o"), tmp_path / "o", str(meta))
    assert "datatype" in line


def test_sigmf_malformed_json(tmp_path):
    meta = _sigmf(tmp_path, _samples())
    meta.write_text(meta.read_text()[:-7])
    _assert_error(_run([meta, *HINTS], tmp_path / "o"), tmp_path / "o", "not valid JSON", "line ")


def test_checksum_mismatch_warns_and_strict_refuses(tmp_path):
    meta = _sigmf(tmp_path, _samples())
    _edit_meta(meta, lambda d: d["global"].update({"core:sha512": "0" * 128}))
    r = _run([meta, *HINTS], tmp_path / "o")
    assert r.exit_code == 0, r.stderr
    assert any("checksum" in m for m in _warnings(r))
    rep = json.loads((tmp_path / "o" / "cap.json").read_text())
    assert any("checksum" in m for m in rep["warnings"])
    r2 = _run([meta, *HINTS, "--strict"], tmp_path / "o2")
    _assert_error(r2, tmp_path / "o2", "checksum", "cap.sigmf-data")


def test_sigmf_data_shorter_than_annotations_claim(tmp_path):
    x = _samples()
    meta = _sigmf(tmp_path, x)
    claim = len(x) + 50_000
    _edit_meta(meta, lambda d: d["annotations"].append({"core:sample_start": 0, "core:sample_count": claim}))
    r = _run([meta, *HINTS], tmp_path / "o")
    assert r.exit_code == 0, r.stderr
    # SigMF 1.x: an annotation covers core:sample_start .. + core:sample_count samples
    assert any(f"holds {len(x)} samples" in m and str(claim) in m for m in _warnings(r))


def test_sigmf_capture_segment_past_the_data(tmp_path):
    x = _samples()
    meta = _sigmf(tmp_path, x)
    _edit_meta(meta, lambda d: d["captures"].append({"core:sample_start": 2 * len(x)}))
    r = _run([meta, *HINTS], tmp_path / "o")
    assert r.exit_code == 0, r.stderr
    assert any(f"reach sample {2 * len(x) + 1}" in m for m in _warnings(r))


# ----------------------------------------------------------------- sample values
@pytest.mark.parametrize("bad", [np.nan, np.inf])
def test_nan_or_inf_names_the_first_bad_sample(tmp_path, bad):
    x = _samples()
    meta = _sigmf(tmp_path, x)                     # the writer refuses NaN: poke it into the dataset
    x[1234] = bad
    x[5000] = np.nan
    x.astype("<c8").tofile(tmp_path / "cap.sigmf-data")
    # numpy: the first index where np.isfinite is False is 1234
    assert int(np.flatnonzero(~np.isfinite(x))[0]) == 1234
    _assert_error(_run([meta, *HINTS], tmp_path / "o"), tmp_path / "o", "sample 1234 ", "NaN or Inf")


def test_all_zero_capture(tmp_path):
    meta = _sigmf(tmp_path, np.zeros(40_000, np.complex64))
    _assert_error(_run([meta, *HINTS], tmp_path / "o"), tmp_path / "o", "all samples are zero")


def test_pure_noise_names_the_floor(tmp_path):
    rng = np.random.default_rng(7)
    sigma = 0.01                                  # per component: complex noise power 2e-4 = -37.0 dBFS
    x = (sigma * (rng.standard_normal(60_000) + 1j * rng.standard_normal(60_000))).astype(np.complex64)
    meta = _sigmf(tmp_path, x)
    line = _assert_error(_run([meta, *HINTS], tmp_path / "o"), tmp_path / "o",
                         "no tone bursts found above the noise floor")
    floor = float(line.split("noise floor (")[1].split(" dBFS")[0])
    # numpy: 10*log10(2*sigma^2) = -36.99 dBFS; the floor estimate within 1 dB
    assert abs(floor - 10 * np.log10(2 * sigma ** 2)) < 1.0


def test_clipping_is_reported_with_its_fraction(tmp_path):
    x = _samples(ebn0_db=25.0)
    peak = np.max(np.abs(np.concatenate([x.real, x.imag])))
    y = x * (1.6 / peak)                          # drive past full scale; ci16 writer clips at +-32767
    with pytest.warns(Warning):
        meta = _sigmf(tmp_path, y, datatype="ci16_le")
    stored = np.fromfile(tmp_path / "cap.sigmf-data", dtype="<i2").reshape(-1, 2)
    # numpy reference: share of samples with |I| or |Q| at >= 0.999 of full scale (32768)
    ref = float(np.mean(np.any(np.abs(stored) >= 0.999 * 32768, axis=1)))
    assert ref > 0.01
    out = tmp_path / "o"
    r = _run([meta, *HINTS], out)
    assert r.exit_code == 0, r.stderr
    assert any("clipped" in m for m in _warnings(r))
    rep = json.loads((out / "cap.json").read_text())
    assert rep["capture"]["clipped_fraction"] == pytest.approx(ref, abs=1e-9)


def test_dc_offset_is_measured_removed_and_reported(tmp_path):
    x = _samples(ebn0_db=14.0, seed=3)
    dc = 0.05 - 0.02j
    meta_clean = _sigmf(tmp_path, x, "clean")
    meta = _sigmf(tmp_path, (x + dc).astype(np.complex64), "dc")
    out = tmp_path / "o"
    r = _run([meta, *HINTS], out)
    assert r.exit_code == 0, r.stderr
    assert any("DC offset" in m for m in _warnings(r))
    rep = json.loads((out / "dc.json").read_text())
    mean = complex(np.mean((x + dc).astype(np.complex64).astype(np.complex128)))     # numpy reference
    assert rep["capture"]["dc_offset_dbfs"] == pytest.approx(10 * np.log10(abs(mean) ** 2), abs=0.01)
    assert rep["capture"]["dc_offset_iq"] == pytest.approx([mean.real, mean.imag], abs=1e-6)
    # with the offset removed, the analysis matches the clean capture's (Eb/N0 within 0.2 dB)
    r0 = _run([meta_clean, *HINTS], out)
    assert r0.exit_code == 0, r0.stderr
    clean = json.loads((out / "clean.json").read_text())
    assert rep["summary"]["ebn0_db"] == pytest.approx(clean["summary"]["ebn0_db"], abs=0.2)
    assert rep["summary"]["ber"]["errors"] == clean["summary"]["ber"]["errors"]


def test_bursts_shorter_than_16_symbols(tmp_path):
    x = _samples(symbols_per_burst=10, ebn0_db=30.0, n_bursts=3, gap_samples=6000.0)
    meta = _sigmf(tmp_path, x)
    _assert_error(_run([meta, *HINTS], tmp_path / "o"), tmp_path / "o", "bursts shorter than 16 symbols")


# ----------------------------------------------------------------- hints
@pytest.mark.parametrize("hints,needle", [
    (["--tones", "-50000,2500", "--baud", "5000"], "outside the sample band"),
    (["--tones", "-2500,2500", "--baud", "40001"], "half the sample rate"),
    (["--tones", "-500,500", "--baud", "5000"], "closer than a quarter of the symbol rate"),
])
def test_impossible_hints(tmp_path, hints, needle):
    # sample band +-40 kHz and half the sample rate 40 kHz follow from fs = 80 kHz (Nyquist)
    meta = _sigmf(tmp_path, _samples(symbols_per_burst=100))
    _assert_error(_run([meta, *hints], tmp_path / "o"), tmp_path / "o", needle)


def test_audio_tones_below_zero_are_outside_the_band(tmp_path):
    x = synthesize(SynthParams(continuous_phase=False,
                               tones_hz=(1200.0, 2200.0), symbol_rate_hz=1200.0, sample_rate_hz=48000.0,
                               symbols_per_burst=100, real=True)).samples
    p = capture.write_audio(tmp_path / "a.wav", x, 48000)
    r = _run([p, "--tones", "-1200,2200", "--baud", "1200"], tmp_path / "o")
    # real audio has the band [0, fs/2] (Nyquist)
    _assert_error(r, tmp_path / "o", "outside the sample band", "[0, 24000]")


# ----------------------------------------------------------------- outputs
def test_output_folder_under_a_regular_file(tmp_path):
    meta = _sigmf(tmp_path, _samples(symbols_per_burst=100))
    blocker = tmp_path / "afile"
    blocker.write_text("x")
    out = blocker / "sub" / "reports"
    r = runner.invoke(app, ["analyze", str(meta), *HINTS, "--out", str(out), "--quiet"])
    assert r.exit_code == 2
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and "is a file, not a folder" in lines[0]
    assert blocker.read_text() == "x"


@pytest.mark.parametrize("which", ["--json", "--html"])
def test_output_equal_to_an_input(tmp_path, which):
    meta = _sigmf(tmp_path, _samples(symbols_per_burst=100))
    data = tmp_path / "cap.sigmf-data"
    before = (_sha(meta), _sha(data))
    for target in (meta, data):
        r = runner.invoke(app, ["analyze", str(meta), *HINTS, which, str(target), "--overwrite",
                                "--out", str(tmp_path / "o")])
        _assert_error(r, tmp_path / "o", "same file as an input")
    assert (_sha(meta), _sha(data)) == before                      # hashlib: inputs unchanged


def test_default_report_name_equal_to_a_raw_input(tmp_path):
    p = capture.write_raw(tmp_path / "cap.json", _samples(symbols_per_burst=100), "cf32")
    before = _sha(p)
    r = runner.invoke(app, ["analyze", str(p), *HINTS, "--rate", "80000", "--format", "cf32", "--out",
                            str(tmp_path), "--overwrite", "--quiet"])
    assert r.exit_code == 2 and "same file as an input" in r.stderr
    assert _sha(p) == before


# ----------------------------------------------------------------- inputs never modified
@pytest.mark.parametrize("kind", ["sigmf", "wav", "raw"])
def test_inputs_unchanged_by_analysis(tmp_path, kind):
    x = _samples(symbols_per_burst=300)
    if kind == "sigmf":
        p = _sigmf(tmp_path, x)
        files = [p, tmp_path / "cap.sigmf-data"]
        extra = []
    elif kind == "wav":
        p = capture.write_audio(tmp_path / "cap.wav", x, 80000)
        files, extra = [p], []
    else:
        p = capture.write_raw(tmp_path / "cap.ci16", x, "ci16")
        files, extra = [p], ["--rate", "80000", "--format", "ci16"]
    before = [_sha(f) for f in files]
    names = sorted(q.name for q in tmp_path.iterdir())
    r = _run([p, *HINTS, *extra], tmp_path / "o")
    assert r.exit_code == 0, r.stderr
    # hashlib sha256 of every input file before and after; no file added beside the inputs
    assert [_sha(f) for f in files] == before
    assert sorted(q.name for q in tmp_path.iterdir() if q.name != "o") == names
    if kind == "wav":
        assert sf.info(str(p)).frames == len(x)                     # soundfile reads the same length
