"""What a result was computed from: the input files a scenario names and the salt data, by hash.

Every file a scenario names (a property map, a forcing file or chamber programme, a climatology
or table file: any text field outside ``[scenario]`` whose value is the path of an existing file,
relative to the scenario) and every salt's phase tables (built from its data file, whether
shipped or registered by the user) are hashed with SHA-256 (FIPS 180-4).  The hashes go into the
result's attributes and into the resume fingerprint of a gridded run, so an edited input is never
mixed with results computed from the old one.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json

import numpy as np

from . import __version__


def file_sha256(path):
    """SHA-256 of a file's bytes (hex)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def input_files(sc):
    """{"table.field": Path} of the existing files a scenario names (``[scenario]`` excluded)."""
    out = {}
    for table, fields in sc.tables.items():
        if table == "scenario" or not isinstance(fields, dict):
            continue
        for key, value in fields.items():
            if isinstance(value, str) and value and "\n" not in value:
                try:
                    p = sc.resolve(value)
                    if p.is_file():
                        out[f"{table}.{key}"] = p
                except (OSError, ValueError):
                    continue
    return out


def tables_sha256(tables):
    """SHA-256 of a salt's phase tables (every array's bytes and every scalar, in field order)."""
    h = hashlib.sha256()

    def feed(obj):
        if dataclasses.is_dataclass(obj):
            for f in dataclasses.fields(obj):
                h.update(f.name.encode())
                feed(getattr(obj, f.name))
        elif isinstance(obj, np.ndarray):
            h.update(str((obj.dtype.str, obj.shape)).encode())
            h.update(np.ascontiguousarray(obj).tobytes())
        else:
            h.update(repr(obj).encode())

    feed(tables)
    return h.hexdigest()


def input_hashes(sc, tables):
    """{"table.field": {"path", "sha256"}} of the input files and {"salt:<name>": sha256} of the salts."""
    out = {k: {"path": str(p), "sha256": file_sha256(p)} for k, p in sorted(input_files(sc).items())}
    for name, tb in sorted(tables.items()):
        out[f"salt:{name}"] = {"sha256": tables_sha256(tb)}
    return out


def fingerprint(sc, hashes):
    """SHA-256 over the validated scenario (tables, sites, salts), the inputs' hashes and the version.

    The scenario's text is left out: a comment or the order of keys does not change a result.
    """
    key = json.dumps({"tables": sc.tables, "sites": sc.sites, "salts": sc.salts,
                      "inputs": {k: v["sha256"] for k, v in hashes.items()}, "version": __version__},
                     sort_keys=True, default=str)
    return hashlib.sha256(key.encode()).hexdigest()
