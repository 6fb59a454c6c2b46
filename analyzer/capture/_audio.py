"""WAV and FLAC captures (through ``soundfile``): two channels are I (left) and Q (right), one channel is
real audio, delivered as the analytic signal.  Audio integers are scaled to +-1 by ``soundfile``."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError
from ._blocks import Capture, _clip_level
from ._files import _check_file, _ignored_options, _sidecar_truth

__all__: list[str] = []

_AUDIO_EXT = {".wav": "wav", ".flac": "flac"}
_AUDIO_BITS = {"PCM_S8": 8, "PCM_U8": 8, "PCM_16": 16, "PCM_24": 24, "PCM_32": 32}


class _AudioSource:
    """Samples of a WAV/FLAC file read through soundfile (opened per read)."""

    def __init__(self, path: Path, channels: int):
        self.path = path
        self.channels = channels

    def raw(self, a: int, b: int) -> np.ndarray:
        import soundfile as sf

        try:
            with sf.SoundFile(str(self.path)) as f:
                f.seek(a)
                x = f.read(b - a, dtype="float64", always_2d=True)
        except (RuntimeError, OSError, ValueError) as exc:       # sf.LibsndfileError is a RuntimeError
            raise InputError(f"cannot read samples {a} to {b} ({exc})", self.path,
                             "the audio file is damaged; write or record it again") from None
        if len(x) != b - a:
            raise InputError(f"audio file ends early: samples {a} to {b} were expected, {len(x)} read",
                             self.path, "the audio file is truncated; write or record it again")
        if self.channels == 2:
            return x[:, 0] + 1j * x[:, 1]
        return x[:, 0]


def _open_audio(path: Path, container: str, rate, fmt) -> Capture:
    import soundfile as sf

    _check_file(path)
    if path.stat().st_size == 0:
        raise InputError("file is empty", path, "record or write the capture again")
    try:
        info = sf.info(str(path))
    except (RuntimeError, sf.LibsndfileError) as exc:
        raise InputError(f"cannot read as {container.upper()} audio ({exc})", path,
                         "check that the file is a complete WAV/FLAC recording") from None
    _ignored_options(path, rate, fmt, container.upper())
    if info.channels not in (1, 2):
        raise InputError(f"audio has {info.channels} channels", path,
                         "give a mono file (real audio) or a stereo file (I left, Q right)")
    if info.frames <= 0:
        raise InputError("audio file holds no samples", path, "record or write the capture again")
    return Capture(path=path, data_path=path, kind="iq" if info.channels == 2 else "audio",
                   sample_rate_hz=float(info.samplerate), centre_hz=None, n_samples=int(info.frames),
                   datatype=f"{container}:{info.subtype}", truth=_sidecar_truth(path), metadata={},
                   clip_level=_clip_level(_AUDIO_BITS.get(info.subtype)), _source=_AudioSource(path, info.channels))


