#!/usr/bin/python3
"""Recompute a source's Merkle root from the CSV file alone, without unseen and without the key.

Written from docs/row-digests.md (format 2), so that an auditor can check the `merkle_root` of a
ledger's `source` entry against the file they were given:

    python3 tools/source_root.py data.csv [--delimiter ,]

prints the root as 64 hex digits. Row digest: the first 16 bytes of SHA-256 over the row's
canonical bytes (every column, in column order). Root: RFC 6962 section 2.1 over the row digests
in row order. Standard library only.
"""
import argparse
import csv
import hashlib
import math
import re
import struct
import sys

# A number: one decimal number in the general format, optional sign, digits, optional fraction,
# optional exponent; its value must be finite (docs/row-digests.md).
NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
MISSING = {"", "NA", "NaN"}


def canonical_cell(cell):
    if cell in MISSING:
        return b"\x00"
    if NUMBER.fullmatch(cell) and not cell.startswith("+-"):
        value = float(cell)
        if math.isfinite(value):
            if value == 0:
                value = 0.0  # -0 is written as +0
            return b"\x01" + struct.pack(">d", value)
    data = cell.encode("utf-8")
    return b"\x02" + struct.pack(">I", len(data)) + data


def row_digest(fields):
    return hashlib.sha256(b"".join(canonical_cell(f) for f in fields)).digest()[:16]


def merkle_root(leaves):
    """RFC 6962 section 2.1: MTH over the leaves (each a row digest)."""
    if not leaves:
        return hashlib.sha256(b"").digest()
    if len(leaves) == 1:
        return hashlib.sha256(b"\x00" + leaves[0]).digest()
    k = 1
    while k * 2 < len(leaves):
        k *= 2
    return hashlib.sha256(b"\x01" + merkle_root(leaves[:k]) + merkle_root(leaves[k:])).digest()


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("csv_file")
    parser.add_argument("--delimiter", default=",")
    args = parser.parse_args()
    with open(args.csv_file, newline="", encoding="utf-8-sig") as f:
        reader = csv.reader(f, delimiter=args.delimiter, strict=True)
        next(reader)  # the header row
        leaves = [row_digest(row) for row in reader]
    print(merkle_root(leaves).hex())


if __name__ == "__main__":
    sys.exit(main())
