"""tonepair: offline analyzer for captured recordings of two-tone FSK bursts.

Use from Python::

    import analyzer
    result = analyzer.analyze("capture.sigmf-meta", tones_hz=(-2500, 2500), symbol_rate_hz=5000)
    print(result.summary.stats.ebn0_db, result.summary.ber.rate)
"""

__version__ = "0.1.0"

from .errors import InputError  # noqa: E402


def analyze(*args, **kwargs):
    """Analyse a capture; see :func:`analyzer.pipeline.analyze`."""
    from .pipeline import analyze as _analyze

    return _analyze(*args, **kwargs)


__all__ = ["analyze", "InputError", "__version__"]
