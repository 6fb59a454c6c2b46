"""Plain-text exports of an analysis: the decided tones (``--bits``) and the valid frames (``--frames-out``).

Both are rendered as strings here and written by the command like the other reports.
"""

from __future__ import annotations

import numpy as np


def decisions_text(result) -> str:
    """Every burst's decisions: a ``#`` header line, then one line of ``0``/``1``.

    The header gives the burst index, the fractional sample where its first
    symbol begins, the symbol rate and the two tones; each character below it
    is the decided tone of one symbol, 0 for the lower tone and 1 for the
    upper one, in order.
    """
    lines = []
    for b in result.bursts:
        lines.append(f"# burst {b.index}  start_sample {b.grid.first_start:.3f}  symbol_rate_hz "
                     f"{b.symbol_rate_hz:.6g}  tones_hz {b.tones_hz[0]:.6g},{b.tones_hz[1]:.6g}  "
                     f"symbols {b.n_symbols}")
        d = np.asarray(b.decisions, dtype=np.uint8)
        lines.append((d + np.uint8(ord("0"))).tobytes().decode("ascii"))
    return "\n".join(lines) + ("\n" if lines else "")


def valid_frames_text(result) -> str:
    """The content (without flags and FCS) of every frame with a valid FCS, one frame a line, in hex
    (HDLC frames found in the decisions whatever the reference)."""
    from ..errorcount import find_frames

    lines = []
    for b in result.bursts:
        # the frames the analysis counted, or (frames not the reference) those in the decisions
        found = b.frames.frames if getattr(b, "frames", None) is not None else find_frames(b.decisions)
        lines += [f.data.hex() for f in found if f.fcs_valid]
    return "\n".join(lines) + ("\n" if lines else "")
