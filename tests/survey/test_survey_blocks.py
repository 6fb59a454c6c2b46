"""The survey pass read in blocks: results do not depend on the block size.

References: whole-file processing (the default block holds these small captures
whole) is the reference for the block-size checks -- the same numbers within
zero tolerance; ``numpy.fromfile`` + ``numpy.mean`` (general-purpose library)
for the DC offset.
"""

from __future__ import annotations

import numpy as np
import pytest

from analyzer import pipeline
from analyzer import report


@pytest.mark.parametrize("hints", [True, False])
def test_tiny_blocks_give_the_same_report_as_whole_file(dc_capture, hints, json_numbers):
    kw = dict(tones_hz=(-2500, 2500), symbol_rate_hz=5000) if hints else {}
    whole = report.build_report(pipeline.analyze(dc_capture, **kw))
    tiny = report.build_report(pipeline.analyze(dc_capture, block=pipeline.QUANTUM, **kw))
    assert pipeline.QUANTUM < whole["capture"]["samples"] / 8          # the tiny run really is blockwise
    assert len(whole["bursts"]) == 3
    # bursts straddle block edges: some start and stop lie in different blocks
    straddle = [b for b in whole["bursts"]
                if int(b["start_sample"]) // pipeline.QUANTUM != int(b["stop_sample"]) // pipeline.QUANTUM]
    assert len(straddle) == 3
    a, b = dict(json_numbers(whole)), dict(json_numbers(tiny))
    assert a.keys() == b.keys()
    diff = {k: (a[k], b[k]) for k in a if a[k] != b[k]}
    assert diff == {}                                                    # tolerance: exactly equal


def test_dc_offset_matches_numpy_mean_of_whole_file(dc_capture):
    data = np.fromfile(str(dc_capture).replace(".sigmf-meta", ".sigmf-data"), dtype=np.complex64)
    ref = np.mean(data.astype(np.complex128))                            # reference: numpy over the whole file
    rep = report.build_report(pipeline.analyze(dc_capture, tones_hz=(-2500, 2500), symbol_rate_hz=5000,
                                                    block=pipeline.QUANTUM))
    i, q = rep["capture"]["dc_offset_iq"]
    # tolerance 1e-9 of full scale: with the band known, each frame's sum is its 0 Hz bin from a
    # single-precision FFT; the samples themselves are single precision (spacing 6e-8 near 1)
    assert abs(i - ref.real) < 1e-9 and abs(q - ref.imag) < 1e-9
