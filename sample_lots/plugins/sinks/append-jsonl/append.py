#!/usr/bin/env python3
"""Example twistlot sink (protocol 1): reads one lot's results as JSON on stdin and keeps
them as a single line, keyed by lot, in the file named by the first argument.

Idempotent per lot: a lot sent again (the same shift run twice, or the same lots run
from another folder) replaces its earlier line instead of adding a second one, so a
plant system reading the file never counts a lot twice. The file is rewritten through a
temporary file and a rename, so a reader never sees half of it."""
import json
import os
import sys
import tempfile


def main():
    request = json.load(sys.stdin)
    if request.get("protocol") != 1:
        sys.exit(f"append-jsonl speaks protocol 1, got {request.get('protocol')}")
    if len(sys.argv) < 2:
        sys.exit("append-jsonl needs the output file as its argument")
    path = sys.argv[1]
    lot = request["lot"]["lot"]
    kept = []
    if os.path.exists(path):
        with open(path, encoding="utf-8") as existing:
            for line in existing:
                if line.strip() and json.loads(line).get("lot", {}).get("lot") != lot:
                    kept.append(line.rstrip("\n"))
    kept.append(json.dumps({"lot": request["lot"], "tests": request["tests"]}, sort_keys=True))
    folder = os.path.dirname(os.path.abspath(path))
    with tempfile.NamedTemporaryFile("w", encoding="utf-8", dir=folder, delete=False) as out:
        out.write("\n".join(kept) + "\n")
        temporary = out.name
    os.replace(temporary, path)


if __name__ == "__main__":
    main()
