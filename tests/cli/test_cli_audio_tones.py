"""Audio tones must lie in (0, fs/2): real samples carry no negative frequencies and nothing at or
above half the sample rate (the sampling theorem, Nyquist -- common practice)."""

from __future__ import annotations

import pytest

from analyzer import capture
from analyzer.synth import SynthParams, synthesize


def _one_error_line(r, *needles):
    assert r.exit_code == 2
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: "), r.stderr
    assert "Traceback" not in r.output + r.stderr
    for n in needles:
        assert n in lines[0]


@pytest.mark.parametrize("tones,offset", [("-2500,2500", "0"), ("0,2200", "0"), ("1200,25000", "0"),
                                          ("1200,2200", "-1300"), ("20000,23000", "1000")])
def test_synth_refuses_audio_tones_outside_0_to_half_the_rate(run_cli, tmp_path, tones, offset):
    out = tmp_path / "x.wav"
    r = run_cli("synth", out, "--audio", "--tones", tones, "--offset", offset, "--rate", "48000", "--baud", "1200")
    _one_error_line(r, "above 0 and below half the sample rate (24000 Hz)")
    assert not out.exists()


@pytest.mark.parametrize("tones", ["0,2200", "1200,24000", "-1200,2200"])
def test_analyze_refuses_audio_tones_outside_0_to_half_the_rate(run_cli, tmp_path, tones):
    x = synthesize(SynthParams(tones_hz=(1200.0, 2200.0), symbol_rate_hz=1200.0, sample_rate_hz=48000.0,
                               symbols_per_burst=100, real=True)).samples
    wav = capture.write_audio(tmp_path / "a.wav", x, 48000)
    r = run_cli("analyze", wav, "--tones", tones, "--baud", "1200", "--out", tmp_path / "o")
    _one_error_line(r, "outside the sample band [0, 24000] Hz", "above 0 and below half the sample rate")
    assert not (tmp_path / "o").exists() or not any((tmp_path / "o").iterdir())
