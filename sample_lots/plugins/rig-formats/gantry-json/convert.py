#!/usr/bin/env python3
"""Converts a gantry rig JSON export (invented layout) to twistlot's native CSV.

Exec rig-format protocol 1: twistlot runs `python3 convert.py FILE` in this folder,
sends a JSON request ({"protocol": 1, "plugin": ..., "file": ...}) on stdin and reads
the native format from stdout. Errors go to stderr with a non-zero exit status.
"""
import json
import sys

ANGLE_TO_DEG = {"deg": 1.0, "rad": 57.29577951308232}
TORQUE_TO_NMM = {"N.mm": 1.0, "N.cm": 10.0, "N.m": 1000.0}
META_KEYS = {"sn": "serial", "pn": "part", "lot": "lot", "station": "rig", "op": "operator", "t0": "started"}


def main():
    request = json.loads(sys.stdin.read() or "{}")
    if request.get("protocol", 1) != 1:
        sys.exit("gantry-json converter speaks protocol 1 only")
    path = sys.argv[1] if len(sys.argv) > 1 else request["file"]
    with open(path, encoding="utf-8") as handle:
        doc = json.load(handle)
    if doc.get("format") != "gantry-tq/1":
        sys.exit(f"{path}: not a gantry-tq/1 document")
    units = doc.get("units", {})
    try:
        angle_factor = ANGLE_TO_DEG[units.get("angle", "deg")]
        torque_factor = TORQUE_TO_NMM[units.get("torque", "N.mm")]
    except KeyError as missing:
        sys.exit(f"{path}: unknown unit {missing}")
    out = sys.stdout
    for key, value in doc.get("meta", {}).items():
        out.write(f"# {META_KEYS.get(key, key)}: {value}\n")
    out.write("angle_deg,torque_nmm,time_s\n")
    for index, sample in enumerate(doc.get("samples", [])):
        if len(sample) != 3:
            sys.exit(f"{path}: sample {index} has {len(sample)} values, expected 3 (t, angle, torque)")
        t, angle, torque = sample
        out.write(f"{angle * angle_factor:.4f},{torque * torque_factor:.4f},{t:.3f}\n")


if __name__ == "__main__":
    main()
