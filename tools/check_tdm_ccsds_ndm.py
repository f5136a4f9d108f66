"""Checks that a TDM written by arcwise is read by the independent `ccsds-ndm` package
(PyPI) with the same measurements as the TDM it was written from, or as the measurement
CSV arcwise wrote of the same simulated arc. Usage:
    python tools/check_tdm_ccsds_ndm.py ORIGINAL.tdm WRITTEN.tdm
    python tools/check_tdm_ccsds_ndm.py --against-csv ARC.csv WRITTEN.tdm
Exit status 1 with the difference when they disagree."""
import sys
from datetime import datetime

from ccsds_ndm.ndm_io import NdmIo

KEYS = ("range", "doppler_instantaneous", "angle_1", "angle_2")


def measurements(path):
    """(segment, epoch as datetime, keyword, value) for every observation ccsds-ndm reads."""
    tdm = NdmIo().from_path(path)
    out = []
    for k, seg in enumerate(tdm.body.segment):
        meta = seg.metadata
        if str(getattr(meta.time_system, "value", meta.time_system)) != "UTC":
            sys.exit(f"{path}: segment {k} is on {meta.time_system}; this check compares UTC epochs")
        for obs in seg.data.observation:
            for key in KEYS:
                v = getattr(obs, key)
                if v is not None:
                    value = getattr(v, "value", v)
                    out.append((k, datetime.fromisoformat(str(obs.epoch).rstrip("Z")), key, float(value)))
    return tdm, out


def main(original, written):
    _, a = measurements(original)
    tdm, b = measurements(written)
    if len(a) != len(b):
        sys.exit(f"{written}: ccsds-ndm reads {len(b)} measurements, {len(a)} in {original}")
    for x, y in zip(a, b):
        same_time = abs((x[1] - y[1]).total_seconds()) < 1e-6
        if x[0] != y[0] or x[2] != y[2] or not same_time or x[3] != y[3]:
            sys.exit(f"{written}: {y} read, {x} in {original}")
    m = tdm.body.segment[0].metadata
    print(f"{written}: ccsds-ndm reads {len(b)} measurements in {len(tdm.body.segment)} segment(s), "
          f"path {m.path}, participants {m.participant_1}, {m.participant_2}: all equal to {original}")


# The TDM keyword of each measurement CSV word (AZEL and RADEC angles share ANGLE_1/2).
CSV_TO_TDM = {"range_km": "range", "one_way_range_km": "range",
              "range_rate_km_s": "doppler_instantaneous", "azimuth_deg": "angle_1",
              "elevation_deg": "angle_2", "ra_deg": "angle_1", "dec_deg": "angle_2"}


def against_csv(csv_path, written):
    """Every CSV row must be read by ccsds-ndm from the TDM, with the same value."""
    want = {}
    with open(csv_path) as f:
        rows = [l.strip() for l in f if l.strip() and not l.startswith("#")]
    for row in rows[1:]:
        epoch, site, word, value = row.split(",")[:4]
        key = (site, datetime.fromisoformat(epoch.rstrip("Z")), CSV_TO_TDM[word])
        want[key] = float(value)
    tdm = NdmIo().from_path(written)
    got = {}
    for seg in tdm.body.segment:
        site = seg.metadata.participant_2
        for obs in seg.data.observation:
            for key in KEYS:
                v = getattr(obs, key)
                if v is not None:
                    t = datetime.fromisoformat(str(obs.epoch).rstrip("Z"))
                    got[(site, t, key)] = float(getattr(v, "value", v))
    if len(got) != len(want):
        sys.exit(f"{written}: ccsds-ndm reads {len(got)} measurements, {len(want)} in {csv_path}")
    for k, v in want.items():
        if k not in got or abs(got[k] - v) > 1e-9 * max(1.0, abs(v)):
            sys.exit(f"{written}: {k} = {got.get(k)} read, {v} in {csv_path}")
    print(f"{written}: ccsds-ndm reads {len(got)} measurements in {len(tdm.body.segment)} "
          f"segment(s), all equal to {csv_path}")


if __name__ == "__main__":
    if sys.argv[1] == "--against-csv":
        against_csv(sys.argv[2], sys.argv[3])
    else:
        main(sys.argv[1], sys.argv[2])
