"""HDLC frames: line coding, frame check, counts in tones, frame error rate theory.

References used below (outside the project):

* CRC-16/X.25 check value: the CRC of the nine ASCII characters "123456789" is
  0x906E (common practice, from memory); good residue 0xF0B8 over a frame and its
  FCS (ITU-T X.25 / ISO/IEC 13239, from memory).
* A bitwise CRC written here from the ISO/IEC 13239 description (from memory):
  register preset to all ones, each bit (least significant first) shifted through
  the generator x^16 + x^12 + x^5 + 1, the FCS the one's complement of the register.
* NRZI and zero-bit insertion rules (ISO/IEC 13239, from memory) on hand-worked
  examples.
* Clopper-Pearson intervals through ``scipy.stats.beta`` and frame error counts
  against the binomial law, ``scipy.stats.binom``.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from analyzer import errorcount, theory
# a FrameCount of made-up frames and the inversion of a frame error rate have no public door
# (count_frames needs tones, frame_theory returns only the loss): reached through their modules
from analyzer.errorcount import _frame_theory, _hdlc


def _crc_bitwise(data: bytes) -> int:
    """CRC-16 of ISO/IEC 13239 bit by bit (from memory): preset 0xFFFF, generator x^16+x^12+x^5+1
    worked least significant bit first (0x8408), one's complement at the end."""
    reg = 0xFFFF
    for byte in data:
        for i in range(8):
            bit = (byte >> i) & 1
            fb = (reg ^ bit) & 1
            reg >>= 1
            if fb:
                reg ^= 0x8408
    return reg ^ 0xFFFF


# --------------------------------------------------------------------------- frame check sequence
def test_crc_check_value_and_bitwise_reference():
    # check value 0x906E (common practice, from memory)
    assert errorcount.crc16_x25(b"123456789") == 0x906E
    assert _crc_bitwise(b"123456789") == 0x906E
    rng = np.random.default_rng(5)
    for n in (0, 1, 2, 7, 64, 301):
        data = rng.integers(0, 256, n, dtype=np.uint8).tobytes()
        assert errorcount.crc16_x25(data) == _crc_bitwise(data)
        # FCS sent low octet first; over frame and FCS the register ends at 0xF0B8 (ITU-T X.25, from memory),
        # i.e. the complemented CRC is 0xF0B8 ^ 0xFFFF = 0x0F47
        assert _crc_bitwise(data + errorcount.fcs_bytes(data)) == 0xF0B8 ^ 0xFFFF


# --------------------------------------------------------------------------- line coding
def test_nrzi_hand_worked():
    # ISO/IEC 13239 NRZI (from memory): a change of tone is 0, no change is 1
    tones = np.array([0, 0, 1, 1, 0, 1, 1, 1], np.uint8)
    assert errorcount.nrzi_decode(tones).tolist() == [1, 0, 1, 0, 0, 1, 1]
    assert errorcount.nrzi_encode([1, 0, 1, 0, 0, 1, 1], first_tone=0).tolist() == tones.tolist()
    # polarity-independent: the inverted tones give the same bits
    assert errorcount.nrzi_decode(1 - tones).tolist() == [1, 0, 1, 0, 0, 1, 1]


@pytest.mark.parametrize("bits, stuffed", [
    # ISO/IEC 13239 zero-bit insertion (from memory): a 0 after every five consecutive 1s
    ("11111", "111110"),
    ("0111111", "01111101"),
    ("1111111111", "111110111110"),
    ("11110111110", "111101111100"),
    ("0101", "0101"),
])
def test_zero_bit_insertion_hand_worked(bits, stuffed):
    b = np.array([int(c) for c in bits], np.uint8)
    s = errorcount.insert_stuffing(b)
    assert "".join(map(str, s)) == stuffed
    back, aborted = errorcount.remove_stuffing(s)
    assert "".join(map(str, back)) == bits and not aborted


def test_flags_and_abort_hand_worked():
    # two flags sharing their 0 (ISO/IEC 13239 allows it, from memory): 011111101111110
    b = np.array([int(c) for c in "011111101111110"], np.uint8)
    assert errorcount.flag_positions(b).tolist() == [0, 7]
    # seven 1s are an abort
    assert errorcount.remove_stuffing(np.array([int(c) for c in "0011111110"], np.uint8))[1]


def test_random_stuffed_content_never_holds_a_flag():
    rng = np.random.default_rng(2)
    data = rng.integers(0, 256, 4000, dtype=np.uint8).tobytes()
    on_air = errorcount.frame_bits(data)
    run = 0
    longest = 0
    for v in on_air:                      # a straightforward count of the longest run of ones
        run = run + 1 if v else 0
        longest = max(longest, run)
    assert longest == 5                   # never six 1s, so never a flag or an abort (ISO/IEC 13239)
    assert errorcount.flag_positions(on_air).size == 0


# --------------------------------------------------------------------------- frames in tones
def _traffic(n_frames=12, size=30, seed=3, flags_between=1):
    rng = np.random.default_rng(seed)
    payloads = [rng.integers(0, 256, size, dtype=np.uint8).tobytes() for _ in range(n_frames)]
    return payloads, errorcount.encode_frames(payloads, preamble_flags=4, flags_between=flags_between, first_tone=1)


def test_frames_found_in_clean_traffic_either_polarity():
    payloads, tones = _traffic()
    for t in (tones, 1 - tones):
        c = errorcount.count_frames(t)
        assert (c.found, c.valid) == (12, 12)
        assert [f.data for f in c.frames] == payloads
        assert all(f.length_bytes == 30 for f in c.frames)
        # every valid frame fixes its symbols, flags and the symbol before: n + 17 each (shared flags overlap)
        assert np.array_equal(c.expected[c.known], t[c.known])
        first = c.frames[0]
        assert c.known[first.start_symbol - 9] and not c.known[first.start_symbol - 10]


def test_corrupted_tones_counted():
    payloads, tones = _traffic(n_frames=12, flags_between=3)
    clean = errorcount.count_frames(tones)
    bad = tones.copy()
    hit = [2, 7, 8]
    for i in hit:                          # one tone error in the middle of frames 2, 7 and 8
        f = clean.frames[i]
        bad[(f.start_symbol + f.stop_symbol) // 2] ^= 1
    c = errorcount.count_frames(bad)
    assert (c.found, c.valid) == (12, 9)
    assert [i for i, f in enumerate(c.frames) if not f.fcs_valid] == hit
    assert c.error_rate == pytest.approx(3 / 12, abs=1e-12)
    # Clopper-Pearson 95% from the beta quantiles (scipy.stats.beta)
    assert c.ci95[0] == pytest.approx(stats.beta.ppf(0.025, 3, 10), rel=1e-9)
    assert c.ci95[1] == pytest.approx(stats.beta.ppf(0.975, 4, 9), rel=1e-9)
    # the damaged frames' symbols are not known; the others' are
    for i, f in enumerate(clean.frames):
        assert c.known[f.start_symbol:f.stop_symbol].all() == (i not in hit)
    # a tone error in a flag between frames 4 and 5 (three flags between): the frame next to it is lost
    bad2 = tones.copy()
    bad2[clean.frames[4].stop_symbol + 3] ^= 1
    c2 = errorcount.count_frames(bad2)
    assert (c2.found, c2.valid) == (12, 11)
    # seven ones inside frame 6: an abort, found and not valid
    bad3 = tones.copy()
    f6 = clean.frames[6]
    a = f6.start_symbol + 40
    bad3[a:a + 9] = bad3[a - 1]           # no tone change over 8 symbols: eight 1s
    c3 = errorcount.count_frames(bad3)
    assert c3.found == 12 and c3.valid == 11 and c3.frames[6].aborted


def test_frame_error_counts_follow_the_binomial_law():
    """Independent tone errors at rate p: the number of intact frames is binomial with the frame error
    rate of the model (``scipy.stats.binom``).  Three flags between frames keep the frames' symbols apart,
    so frames fail independently.  Two-sided band at 1e-5 each side: false-failure probability 2e-5."""
    # short frames at a high tone error rate, so that the 17 edge symbols matter (1 - q: 0.26 against
    # 0.36 without them, ten standard deviations of the count apart)
    n_frames = 2000
    payloads, tones = _traffic(n_frames=n_frames, size=4, seed=11, flags_between=3)
    p = 0.02
    rng = np.random.default_rng(12)
    flips = rng.random(tones.size) < p
    c = errorcount.count_frames(tones ^ flips.astype(np.uint8))
    sent = set(payloads)
    intact = sum(f.fcs_valid and f.data in sent for f in c.frames)
    bits = errorcount.frame_bits(payloads[0]).size
    q = 1.0 - float(np.mean(errorcount.frame_error_rate(p, [errorcount.frame_bits(d).size for d in payloads])))
    lo, hi = stats.binom.ppf(1e-5, n_frames, q), stats.binom.isf(1e-5, n_frames, q)
    assert lo <= intact <= hi
    # the model's value against the closed form (1 - p)^(n + 17) for one length
    assert float(errorcount.frame_error_rate(p, bits)) == pytest.approx(1 - (1 - p) ** (bits + 17), rel=1e-12)


def test_loss_from_frames_inverts_theory():
    # a frame error rate made by theory at 9 dB for 100 frames of 300 on-air bits gives back 0 dB of loss
    p = float(theory.ber_expected(10 ** 0.9))
    fer = float(errorcount.frame_error_rate(p, 300))
    bad = int(round(fer * 100))
    fr = tuple(errorcount.Frame(0, 300, 35, i >= bad, b"") for i in range(100))
    c = _hdlc._count(fr)
    # the loss is measured Eb/N0 minus the Eb/N0 ideal BFSK needs for the tone error rate that gives this FER
    p_meas = _frame_theory._tone_rate_for(c.error_rate, np.full(100, 300.0))
    expect = 9.0 - float(theory.ebn0_required_db(p_meas))
    th = errorcount.frame_theory(10 ** 0.9, theory.LinkModel(), c, 9.0, (8.8, 9.2))
    assert th.loss.value == pytest.approx(expect, abs=1e-9)
    assert abs(th.loss.value) < 0.1       # the rounding of the count to whole frames only
    assert th.loss.ci95[0] < th.loss.value < th.loss.ci95[1]
    assert th.error_rate == pytest.approx(fer, rel=1e-12)
