"""Checks of analyzer.errorcount (patterns, references, the error count) against ITU-T O.150, scipy.signal.max_len_seq and published formulas.

References used (named again beside each check):
* ITU-T O.150 -- pattern polynomials, periods, polarity, start state, longest runs (from memory)
* scipy.signal.max_len_seq -- general-purpose maximal-length sequence generator
* Golomb's randomness postulates for m-sequences (balance: 2^(n-1) ones per period;
  every non-zero n-bit state once per period) -- from memory
* Piling-up lemma: the XOR of k independent bits, each 1 with probability e, is 1 with
  probability (1 - (1 - 2e)^k) / 2 -- from memory
* Hoeffding's inequality for the binomial tail, P(z >= t) <= exp(-t^2/2) -- from memory
Injected errors and slips are inputs whose exact count is known by construction.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.signal import max_len_seq

from analyzer import errorcount
from analyzer.errors import InputError
from analyzer.errorcount import PATTERNS, Reference, count_errors, detect_pattern, parse_bits_text, prbs_sequence
# the state table has no public door: count_errors only shows its effect, the bijection is checked directly
from analyzer.errorcount import _patterns

# ITU-T O.150 (from memory): name -> (register length n, period 2^n - 1, inverted?)
O150 = {
    "PN9": (9, 511, False),
    "PN11": (11, 2047, False),
    "PN15": (15, 32767, True),
    "PN23": (23, 8388607, True),
}


def _cyclic_longest_run(seq: np.ndarray, value: int) -> int:
    """Longest cyclic run of ``value`` in ``seq`` (vectorised)."""
    other = np.flatnonzero(seq != value)
    if other.size == 0:
        return seq.size
    gaps = np.diff(np.concatenate([other, [other[0] + seq.size]])) - 1
    return int(gaps.max())


def _raw(name: str) -> np.ndarray:
    """Non-inverted register output (undo O.150's inversion)."""
    return prbs_sequence(name) ^ np.uint8(PATTERNS[name].inverted)


# ---------------------------------------------------------------------------
# Sequences
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("name", ["PN7", "PN9", "PN11", "PN15", "PN23"])
def test_sequence_is_time_reversed_scipy_mls(name):
    # Reference: scipy.signal.max_len_seq(n) with its default taps and all-ones start.
    # scipy's register obeys s[k+n] = s[k] ^ s[k+t] with t = n - p for these n, i.e. the
    # reciprocal polynomial, so it produces our sequence backwards:
    #     max_len_seq(n)[i] == raw[(n - 1 - i) mod P]    (raw = before O.150 inversion)
    # Tolerance: exact, zero differing bits over the whole period.
    spec = PATTERNS[name]
    ref = max_len_seq(spec.order)[0].astype(np.uint8)
    raw = _raw(name)
    idx = (spec.order - 1 - np.arange(spec.period)) % spec.period
    assert int(np.count_nonzero(raw[idx] != ref)) == 0


@pytest.mark.parametrize("name", list(O150))
def test_periods_polynomials_and_polarity_match_o150(name):
    # Reference: ITU-T O.150 (from memory) -- register length, period 2^n - 1, polarity.
    # Tolerance: exact integers.
    n, period, inverted = O150[name]
    spec = PATTERNS[name]
    assert (spec.order, spec.period, spec.inverted) == (n, period, inverted)
    # The pattern repeats after exactly `period` bits (exact, zero differing bits) ...
    two = prbs_sequence(name, 2 * period + 5)
    assert int(np.count_nonzero(two[period:2 * period + 5] != two[:period + 5])) == 0
    # ... and no shorter: every non-zero n-bit state occurs exactly once per period
    # (Golomb, from memory), so the state table is a bijection onto 0..period-1.
    table = _patterns._state_table(name)
    assert int(table[0]) == -1
    assert np.array_equal(np.sort(table[1:]), np.arange(period))


@pytest.mark.parametrize("name", list(O150))
def test_start_runs_and_balance_match_o150(name):
    n, period, inverted = O150[name]
    seq = prbs_sequence(name)
    # ITU-T O.150 (from memory): the register starts with all stages at ONE, so the
    # first n output bits are ONE before inversion (ZERO after).  Exact.
    assert int(np.count_nonzero(seq[:n] != (0 if inverted else 1))) == 0
    # ITU-T O.150 (from memory): longest sequence of ZEROs is n-1 in the non-inverted
    # signal (8 for PN9, 10 for PN11) and n in the inverted signal (15 for PN15,
    # 23 for PN23).  Exact integers, cyclic over one period.
    assert _cyclic_longest_run(seq, 0) == (n if inverted else n - 1)
    # Golomb balance (from memory): 2^(n-1) ONEs per period in the non-inverted
    # sequence.  Exact.
    assert int(_raw(name).sum()) == 2 ** (n - 1)


def test_recurrence_holds_from_the_standard_start():
    # ITU-T O.150 (from memory): PN9 = x^9 + x^5 + 1, i.e. b[k] = b[k-5] ^ b[k-9],
    # starting from nine ONEs.  Checked directly on 5 periods; exact.
    b = prbs_sequence("PN9", 5 * 511)
    assert int(np.count_nonzero(b[9:] ^ b[4:-5] ^ b[:-9])) == 0
    assert int(b[:9].sum()) == 9


# ---------------------------------------------------------------------------
# Detection
# ---------------------------------------------------------------------------
def _received(name, inverted, n_bits, ber, rng):
    spec = PATTERNS[name]
    start = int(rng.integers(0, spec.period))
    idx = (start + np.arange(n_bits)) % spec.period
    x = prbs_sequence(name)[idx] ^ np.uint8(inverted)
    flips = rng.random(n_bits) < ber
    return x ^ flips.astype(np.uint8), x, flips


@pytest.mark.parametrize("name", list(PATTERNS))
@pytest.mark.parametrize("inverted", [False, True])
def test_detects_pattern_and_polarity_at_5_percent_ber(name, inverted):
    rng = np.random.default_rng(100 + 2 * list(PATTERNS).index(name) + inverted)
    e = 0.05
    y, _, _ = _received(name, inverted, 4000, e, rng)
    det = detect_pattern(y)
    assert det is not None
    assert (det.name, det.inverted) == (name, inverted)
    # Piling-up lemma (from memory): a check of 3 bits holds with probability
    # (1 + (1 - 2e)^3) / 2 = 0.8645 at e = 0.05.  Tolerance 0.04: each error touches at
    # most 3 of the ~4000 checks, so the standard deviation is below
    # sqrt(3 * 0.14 * 0.86 / 4000) = 0.0095; 0.04 is over 4 of those.
    assert det.check_fraction == pytest.approx((1 + (1 - 2 * e) ** 3) / 2, abs=0.04)


def test_detects_pn23_inverted_at_10_percent_ber():
    # At e = 0.1 the z-score is about (1-2e)^3 * sqrt(m) = 0.512 * sqrt(1977) = 23 >> 5.
    rng = np.random.default_rng(7)
    y, _, _ = _received("PN23", False, 2000, 0.1, rng)
    det = detect_pattern(y ^ np.uint8(1))
    assert det is not None and (det.name, det.inverted) == ("PN23", True)
    # Piling-up lemma (from memory): 0.756 at e = 0.1; tolerance 0.05 (> 4 sd, as above).
    assert det.check_fraction == pytest.approx((1 + 0.8 ** 3) / 2, abs=0.05)


def test_no_detection_on_random_bits():
    # Hoeffding (from memory): for random bits each (pattern, polarity) hypothesis reaches
    # z >= 5 with probability <= exp(-12.5) = 3.7e-6; with 10 hypotheses <= 3.7e-5 per call,
    # so over 3000 calls the expected number of false detections is <= 0.11.  Rate
    # asserted: 0 false detections in 3000 random inputs of 64..2048 bits.
    rng = np.random.default_rng(2024)
    lengths = rng.integers(64, 2049, size=3000)
    hits = sum(detect_pattern(rng.integers(0, 2, int(n)).astype(np.uint8)) is not None
               for n in lengths)
    assert hits == 0
    assert math.exp(-errorcount.DETECT_Z_MIN ** 2 / 2) * 10 * 3000 < 0.12


def test_detection_needs_three_orders_of_bits():
    # Rule stated in detect_pattern: fewer than 3*order bits -> None.  Exact length limits
    # for PN15 (n = 15): 44 bits refused, 45 accepted when error free.
    b = prbs_sequence("PN15", 45)
    assert detect_pattern(b[:44], candidates=["PN15"]) is None
    det = detect_pattern(b, candidates=["PN15"])
    assert det is not None and det.check_fraction == pytest.approx(1.0, abs=0.0)
    # A constant input satisfies every recurrence and identifies nothing: None.
    assert detect_pattern(np.ones(500, dtype=np.uint8)) is None


# ---------------------------------------------------------------------------
# Error counting
# ---------------------------------------------------------------------------
def test_counts_exactly_the_injected_errors():
    rng = np.random.default_rng(11)
    x = _received("PN15", False, 20000, 0.0, rng)[0]
    pos = rng.choice(np.arange(200, 20000), size=37, replace=False)
    y = x.copy()
    y[pos] ^= 1
    c = count_errors(y, Reference.prbs("PN15"))
    # By construction: 37 flipped bits, none inside the 15 seed bits; no slip.
    # Tolerance: exact.  Seed bits (order = 15) are not counted.
    assert c.synced and c.slips == 0
    assert c.errors == 37
    assert c.sync_position == 15 and c.bits == 20000 - 15
    assert int(np.count_nonzero(c.expected[c.counted] != x[c.counted])) == 0


@pytest.mark.parametrize("name,ber", [("PN9", 1e-3), ("PN11", 0.1), ("PN23", 0.05)])
def test_inserted_and_deleted_bit_are_two_slips(name, ber):
    rng = np.random.default_rng(31)
    _, x, flips = _received(name, False, 30000, ber, rng)
    y0 = x ^ flips.astype(np.uint8)
    y = np.concatenate([y0[:10000], [1 - y0[10000]], y0[10000:20000], y0[20001:]]).astype(np.uint8)
    f = np.concatenate([flips[:10000], [False], flips[10000:20000], flips[20001:]])
    c = count_errors(y, Reference.prbs(name))
    # By construction: one inserted and one deleted bit -> 2 slips (exact).
    assert c.synced and c.slips == 2
    # Errors equal the flips injected into the counted bits; tolerance 1 per slip
    # (a flip right next to a slip point can be explained by moving the split).
    assert abs(c.errors - int(f[c.counted].sum())) <= 2
    # Excluded after sync: exactly the one inserted bit (rule in count_errors).
    assert c.bits == y.size - c.sync_position - 1


def test_explicit_pattern_reference_with_a_deleted_bit():
    rng = np.random.default_rng(5)
    pattern = rng.integers(0, 2, 1000).astype(np.uint8)
    x = pattern[(337 + np.arange(20001)) % 1000]
    y = x.copy()
    pos = rng.choice(np.arange(0, 20001), size=50, replace=False)
    pos = pos[pos != 12345]
    y[pos] ^= 1
    y = np.delete(y, 12345)
    c = count_errors(y, Reference.pattern(pattern, "bits:random1000"))
    # By construction: one deleted bit -> 1 slip (exact); len(pos) flips -> errors,
    # tolerance 1 (one slip); nothing excluded for a deletion and no seed for an explicit
    # pattern, so all bits are counted (exact).
    assert c.reference == "bits:random1000"
    assert c.synced and c.slips == 1
    assert abs(c.errors - pos.size) <= 1
    assert c.bits == y.size and c.sync_position == 0


def test_pn23_alignment_from_mid_period():
    rng = np.random.default_rng(23)
    start = 4_194_303 + 12_345                      # deep inside the 8 388 607-bit period
    idx = (start + np.arange(30000)) % 8388607
    x = prbs_sequence("PN23")[idx]
    flips = rng.random(x.size) < 0.01
    c = count_errors(x ^ flips.astype(np.uint8), Reference.prbs("PN23"))
    # By construction: the expected bits are the transmitted ones (exact) and the error
    # count is the number of flips in the counted bits (exact, no slip).
    assert c.synced and c.slips == 0
    assert int(np.count_nonzero(c.expected[c.counted] != x[c.counted])) == 0
    assert c.errors == int(flips[c.counted].sum())
    assert c.bits == 30000 - c.sync_position


def test_sync_at_ber_0_2_and_inverted_reference():
    # Noncoherent receiver at BER 0.2, received bits complemented (tone mapping swapped).
    rng = np.random.default_rng(8)
    y, x, flips = _received("PN15", True, 40000, 0.2, rng)
    c = count_errors(y, Reference.prbs("PN15", inverted=True))
    # By construction: expected equals the transmitted bits (exact) and errors equal the
    # injected flips in the counted bits (exact); at most 8W = 960 bits before sync.
    assert c.synced and c.slips == 0 and c.reference == "PN15 inverted"
    assert int(np.count_nonzero(c.expected[c.counted] != x[c.counted])) == 0
    assert c.errors == int(flips[c.counted].sum())
    assert c.sync_position <= 960


def test_random_bits_do_not_sync():
    # Random bits agree with any alignment at rate 0.5, far above LOSS_OF_SYNC_RATE; the
    # acceptance test over 4W bits is > 4.8 sd away.  Expected: no sync, 0 bits (exact).
    rng = np.random.default_rng(9)
    y = rng.integers(0, 2, 20000).astype(np.uint8)
    for ref in (Reference.prbs("PN9"), Reference.pattern(rng.integers(0, 2, 500), "bits:r")):
        c = count_errors(y, ref)
        assert (c.synced, c.bits, c.errors, c.sync_position) == (False, 0, 0, -1)


def test_unknown_reference_is_an_input_error():
    with pytest.raises(InputError, match="PN8"):
        Reference.prbs("PN8")
    with pytest.raises(InputError):
        Reference.pattern(np.array([0, 1, 2]), "bits:x")


# ---------------------------------------------------------------------------
# Bits files
# ---------------------------------------------------------------------------
def test_parse_bits_text_good():
    text = "# test pattern\n0101 1100\n\t111\r\n   # indented comment\n\n0\n"
    bits = parse_bits_text(text)
    # Expected by the file-format rule (digits in order, whitespace and comments dropped).
    assert bits.dtype == np.uint8
    assert bits.tolist() == [0, 1, 0, 1, 1, 1, 0, 0, 1, 1, 1, 0]


@pytest.mark.parametrize("text,char,line", [
    ("0101\n01x1\n", "'x'", "line 2"),
    ("# c\n\n0 1 2\n", "'2'", "line 3"),
    ("0101 # trailing\n", "'#'", "line 1"),
    ("01\u00e9\n", "'\u00e9'", "line 1"),
])
def test_parse_bits_text_bad_character(text, char, line):
    with pytest.raises(InputError) as info:
        parse_bits_text(text, path="pattern.txt")
    msg = info.value.line()
    assert char in msg and line in msg and msg.startswith("pattern.txt: ")


@pytest.mark.parametrize("text", ["", "   \n\t\n", "# only a comment\n"])
def test_parse_bits_text_empty(text):
    with pytest.raises(InputError, match="no bits"):
        parse_bits_text(text)


@pytest.mark.parametrize("name,ber,inverted", [("PN9", 0.0, False), ("PN9", 0.02, True), ("PN11", 0.1, False),
                                              ("PN15", 0.2, False), ("PN23", 0.05, True)])
def test_alignment_hint_gives_the_same_count(name, ber, inverted):
    # Reference: the count without a hint (rules of count_errors). By construction the
    # streams carry errors at the given BER and two slips; the hint is the alignment found
    # without it, then a wrong one (which must fall back to the full search).
    rng = np.random.default_rng(41)
    _, x, flips = _received(name, inverted, 6000, ber, rng)
    y0 = x ^ flips.astype(np.uint8)
    y = np.concatenate([y0[:2000], [1 - y0[2000]], y0[2000:4000], y0[4001:]]).astype(np.uint8)
    ref = Reference.prbs(name, inverted=inverted)
    plain = count_errors(y, ref)
    assert plain.synced and plain.alignment >= 0
    for hint in (plain.alignment, plain.alignment + 7, plain.alignment - 3 + ref.period):
        hinted = count_errors(y, ref, alignment_hint=hint)
        # tolerance: exactly equal, field by field
        assert (hinted.bits, hinted.errors, hinted.slips, hinted.sync_position, hinted.alignment) == \
            (plain.bits, plain.errors, plain.slips, plain.sync_position, plain.alignment)
        np.testing.assert_array_equal(hinted.counted, plain.counted)
        np.testing.assert_array_equal(hinted.expected, plain.expected)


def test_reference_expected_bits_follow_the_count_alignment():
    # Reference: the count's own expected bits (rules of count_errors) and the pattern's period
    # (O.150: PN9 repeats every 511 bits) for bits before the first one.
    rng = np.random.default_rng(43)
    _, x, flips = _received("PN9", True, 3000, 0.01, rng)
    ref = Reference.prbs("PN9", inverted=True)
    c = count_errors(x ^ flips.astype(np.uint8), ref)
    np.testing.assert_array_equal(ref.expected(c.alignment, 0, 3000), c.expected)        # exact
    np.testing.assert_array_equal(ref.expected(c.alignment, -10, 0), ref.expected(c.alignment, 501, 511))
