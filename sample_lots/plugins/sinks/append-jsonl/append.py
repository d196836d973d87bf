#!/usr/bin/env python3
"""Example twistlot sink (protocol 1): reads one lot's results as JSON on stdin and
appends them as a single line to the file named by the first argument."""
import json
import sys


def main():
    request = json.load(sys.stdin)
    if request.get("protocol") != 1:
        sys.exit(f"append-jsonl speaks protocol 1, got {request.get('protocol')}")
    if len(sys.argv) < 2:
        sys.exit("append-jsonl needs the output file as its argument")
    with open(sys.argv[1], "a", encoding="utf-8") as out:
        out.write(json.dumps({"lot": request["lot"], "tests": request["tests"]}, sort_keys=True) + "\n")


if __name__ == "__main__":
    main()
