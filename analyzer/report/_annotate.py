"""SigMF annotations: a copy of the capture's metadata with one annotation per burst.

The copy is written as ``OUT/NAME.annotated.sigmf-meta``; the input metadata is
never touched.  SigMF pairs a metadata file with the dataset of the same base
name, so the copy records which dataset it describes in the global fields
``tonepair:source_data`` / ``tonepair:source_meta`` (and keeps ``core:sha512`` of that
dataset).  To open it with a SigMF reader, put it beside the dataset under a
matching name, e.g. link (or copy) ``capture.sigmf-data`` to
``NAME.annotated.sigmf-data`` in the same folder.

Each annotation has ``core:sample_start``/``core:sample_count`` (whole samples
covering the burst's symbols, in the dataset's sample index including
``core:offset``), ``core:label``, and when the RF centre (``core:frequency``) is
known, ``core:freq_lower_edge``/``core:freq_upper_edge`` in absolute Hz: the low
tone minus one symbol rate to the high tone plus one symbol rate (the main
lobes of both tones).  Without a known centre the edges are omitted (SigMF
edges are absolute) and the baseband band goes in ``tonepair:band_hz``.
Our own numbers use the ``tonepair`` namespace, declared in ``core:extensions``.
"""

from __future__ import annotations

import copy
import json
import math
import warnings

from ..errors import InputError
from ..capture import NAMESPACE

FIELDS = ("tonepair:ebn0_db", "tonepair:ebn0_db_ci95", "tonepair:ber", "tonepair:errors", "tonepair:bits",
          "tonepair:tones_hz", "tonepair:symbol_rate_hz", "tonepair:implementation_loss_db")


def _annotation(b: dict, centre, offset: int) -> dict:
    start = math.floor(b["start_sample"])
    stop = math.ceil(b["stop_sample"])
    lo = b["tones_hz"][0] - b["symbol_rate_hz"]
    hi = b["tones_hz"][1] + b["symbol_rate_hz"]
    ber = b["ber"]
    a = {"core:sample_start": int(start + offset), "core:sample_count": int(max(stop - start, 1)),
         "core:label": f"burst {b['index']}",
         "core:generator": "tonepair"}
    if centre is not None:
        a["core:freq_lower_edge"] = float(centre + lo)
        a["core:freq_upper_edge"] = float(centre + hi)
    else:
        a["tonepair:band_hz"] = [float(lo), float(hi)]
    a.update({
        "tonepair:ebn0_db": b["ebn0_db"],
        "tonepair:ebn0_db_ci95": b["ebn0_db_ci95"],
        "tonepair:ber": None if ber is None else ber["rate"],
        "tonepair:errors": None if ber is None else ber["errors"],
        "tonepair:bits": None if ber is None else ber["bits"],
        "tonepair:tones_hz": b["tones_hz"],
        "tonepair:symbol_rate_hz": b["symbol_rate_hz"],
        "tonepair:implementation_loss_db": b["implementation_loss_db"],
    })
    return a


def annotated_metadata(result, report: dict) -> str:
    """The annotated copy of a SigMF capture's metadata, validated, as JSON text.

    Parameters
    ----------
    result : AnalysisResult
        Analysis of a SigMF capture (its parsed metadata is copied).
    report : dict
        The JSON-ready report; burst numbers come from it.

    Returns
    -------
    str
        SigMF 1.x metadata text.

    Raises
    ------
    InputError
        The capture is not SigMF, or the annotated copy fails the sigmf validator.
    """
    from sigmf import validate

    cap = result.capture
    if not cap.metadata or not str(cap.path).endswith((".sigmf-meta", ".sigmf-data")):
        raise InputError("SigMF annotations need a SigMF capture", cap.path,
                         "drop --annotate, or record the capture as SigMF")
    meta = copy.deepcopy(cap.metadata)
    g = meta["global"]
    ext = g.setdefault("core:extensions", [])
    if not any(e.get("name") == NAMESPACE["name"] for e in ext):
        ext.append(dict(NAMESPACE))
    g["tonepair:source_data"] = cap.data_path.name
    meta_name = cap.path.name if cap.path.name.endswith(".sigmf-meta") else cap.path.name[:-4] + "meta"
    g["tonepair:source_meta"] = meta_name
    offset = int(g.get("core:offset", 0))
    ours = [_annotation(b, cap.centre_hz, offset) for b in report["bursts"]]
    meta["annotations"] = sorted(list(meta.get("annotations", [])) + ours,
                                 key=lambda a: a.get("core:sample_start", 0))
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            validate.validate(meta)
    except Exception as exc:  # jsonschema ValidationError or SigMFError
        raise InputError(f"annotated SigMF metadata failed validation ({getattr(exc, 'message', exc)})",
                         cap.path, "report this; the input metadata is unchanged") from None
    return json.dumps(meta, indent=2, allow_nan=False) + "\n"
