#!/usr/bin/python3
"""Validates JSON documents against a JSON Schema with Debian's python3-jsonschema
(the reference validator for JSON Schema 2020-12). Prints "valid" or each error.

usage: validate_schema.py SCHEMA DOCUMENT...
"""
import json
import sys

import jsonschema

with open(sys.argv[1]) as f:
    schema = json.load(f)
jsonschema.Draft202012Validator.check_schema(schema)
validator = jsonschema.Draft202012Validator(schema)
failed = False
for path in sys.argv[2:]:
    with open(path) as f:
        doc = json.load(f)
    for error in validator.iter_errors(doc):
        failed = True
        print(f"{path}: {'/'.join(str(p) for p in error.path)}: {error.message}")
if not failed:
    print("valid")
sys.exit(1 if failed else 0)
