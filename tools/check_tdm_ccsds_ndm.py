"""Checks that a TDM written by arcwise is read by the independent `ccsds-ndm` package
(PyPI) with the same measurements as the TDM it was written from. Usage:
    python tools/check_tdm_ccsds_ndm.py ORIGINAL.tdm WRITTEN.tdm
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


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
