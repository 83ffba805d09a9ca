#!/usr/bin/env python3
"""Validates SigMF metadata files against the published SigMF JSON schema.

Usage: python3 tests/io_sigmf_schema.py [--schema SCHEMA.json] FILE.sigmf-meta...

The default schema is tests/data/sigmf-schema.json (SigMF v1.2.x, CC BY-SA 4.0, see the NOTICE
beside it). `cargo test --test io_sigmf` writes sample files to target/tmp/io_sigmf_schema/.
Exits 0 when every file validates, 1 otherwise, 2 on bad usage.
"""

import argparse
import json
import pathlib
import sys

import jsonschema

DEFAULT_SCHEMA = pathlib.Path(__file__).resolve().parent / "data" / "sigmf-schema.json"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--schema", type=pathlib.Path, default=DEFAULT_SCHEMA)
    parser.add_argument("files", nargs="+", type=pathlib.Path)
    args = parser.parse_args()

    schema = json.loads(args.schema.read_text())
    validator_class = jsonschema.validators.validator_for(schema)
    validator_class.check_schema(schema)
    validator = validator_class(schema, format_checker=validator_class.FORMAT_CHECKER)

    failures = 0
    for path in args.files:
        try:
            meta = json.loads(path.read_text())
        except (OSError, ValueError) as e:
            print(f"{path}: cannot read: {e}")
            failures += 1
            continue
        errors = sorted(validator.iter_errors(meta), key=lambda e: list(e.path))
        for e in errors:
            where = "/".join(str(p) for p in e.path) or "(top)"
            print(f"{path}: {where}: {e.message}")
        failures += bool(errors)
        if not errors:
            print(f"{path}: valid")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
