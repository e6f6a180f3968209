"""The detail column of a stored projection row (`Store._projection_row`): what the row's own
columns leave out, as JSON text.

    text = projection_detail_json(p)   # == plain_detail_json(p), byte for byte

A replay evaluates a block every two minutes between hourly readings, with the same air, dew
point, wind and notes and, on most nights, no crossing: the text is kept by its values while they
recur. A value is looked up only where equal keys give the same JSON: the exact type of every
value is in the key, no number is zero (0.0 and -0.0 are equal and written apart; 1, 1.0 and True
are told apart by their types), and each crossing's type and zone are in it (equal instants in two
zones are written apart). The table is emptied when full. tests/test_replay_cpu.py holds it to
the plain text on look-alike values.
"""

from __future__ import annotations

import json

from frostwatch.models import Projection

DETAIL_CACHE_SIZE = 4096  # texts kept
_DETAIL_TEXT: dict[tuple, str] = {}


def plain_detail_json(p: Projection) -> str:
    """The detail text, written afresh."""
    return json.dumps({
        "station": p.station, "air_temp_c": p.air_temp_c, "dew_point_c": p.dew_point_c,
        "wet_bulb_c": p.wet_bulb_c, "inversion_c": p.inversion_c,
        "projected_inversion_c": p.projected_inversion_c, "inversion_class": p.inversion_class,
        "wind_speed_m_s": p.wind_speed_m_s, "notes": list(p.notes),
        "crossings_utc": {k: (v.isoformat() if v else None) for k, v in p.crossings_utc.items()},
    })


def projection_detail_json(p: Projection) -> str:
    """`plain_detail_json(p)`, from the table where equal values were written before."""
    vals = (p.station, p.air_temp_c, p.dew_point_c, p.wet_bulb_c, p.inversion_c, p.projected_inversion_c,
            p.inversion_class, p.wind_speed_m_s)
    if type(p.notes) is not tuple or type(p.crossings_utc) is not dict or 0 in vals:
        return plain_detail_json(p)
    times = tuple(p.crossings_utc.values())
    key = (vals, tuple(map(type, vals)), p.notes, tuple(map(type, p.notes)), tuple(p.crossings_utc), times,
           tuple(map(type, times)), tuple(None if t is None else t.tzinfo for t in times))
    try:
        text = _DETAIL_TEXT.get(key)
    except TypeError:  # a value that cannot be a key (notes that are not texts): written afresh
        return plain_detail_json(p)
    if text is None:
        text = plain_detail_json(p)
        if len(_DETAIL_TEXT) >= DETAIL_CACHE_SIZE:
            _DETAIL_TEXT.clear()
        _DETAIL_TEXT[key] = text
    return text
