"""Checks that an OEM written by arcwise is read by the independent `ccsds-ndm` package
(PyPI) with the same segments, epochs and states. Usage:
    python tools/check_oem_ccsds_ndm.py FILE.oem
Exit status 1 with the difference when they disagree."""
import sys

from ccsds_ndm.ndm_io import NdmIo


def ours(path):
    """The states as arcwise wrote them: a list of segments of (epoch, 6 numbers)."""
    segments, current, data = [], None, False
    for line in open(path):
        t = line.strip()
        if t == "META_START":
            current, data = [], False
            segments.append(current)
        elif t == "META_STOP":
            data = True
        elif data and t and not t.startswith("COMMENT"):
            f = t.split()
            current.append((f[0], [float(x) for x in f[1:7]]))
    return segments


def main(path):
    oem = NdmIo().from_path(path)
    theirs = [
        [(str(sv.epoch), [c.value for c in (sv.x, sv.y, sv.z, sv.x_dot, sv.y_dot, sv.z_dot)])
         for sv in seg.data.state_vector]
        for seg in oem.body.segment
    ]
    mine = ours(path)
    if len(theirs) != len(mine):
        sys.exit(f"{path}: ccsds-ndm reads {len(theirs)} segments, arcwise wrote {len(mine)}")
    n = 0
    for k, (a, b) in enumerate(zip(mine, theirs)):
        if len(a) != len(b):
            sys.exit(f"{path}: segment {k}: {len(b)} states read, {len(a)} written")
        for (ea, xa), (eb, xb) in zip(a, b):
            if ea.rstrip("Z") != eb.rstrip("Z") or any(abs(p - q) > 1e-12 * max(1.0, abs(p)) for p, q in zip(xa, xb)):
                sys.exit(f"{path}: {ea} {xa} written, {eb} {xb} read")
            n += 1
    meta = oem.body.segment[0].metadata
    print(f"{path}: ccsds-ndm reads {len(mine)} segments, {n} states, object {meta.object_name} "
          f"({meta.object_id}), created {oem.header.creation_date}: all equal")


if __name__ == "__main__":
    main(sys.argv[1])
