"""The BIDS rules for a derivative dataset's dataset_description.json, from the BIDS schema.

bidsschematools 1.2.7 ships the machine-readable schema of BIDS v1.11.1. This script writes, for
every field the schema's rules name for dataset_description.json (rule `dataset_description`, and
`derivative_description` for DatasetType "derivative"), its requirement level and its JSON
schema (type, enum, items, required and allowed keys of objects), with the descriptions left out.
tests/bids_dataset_description.rs checks strata's dataset_description.json against it.

Writes tests/data/bids_dataset_description_rules.json.
Run: python3 tests/data/generators/bids_dataset_description.py
"""
import json
import pathlib

from bidsschematools import __version__ as schematools_version
from bidsschematools import schema

OUT = pathlib.Path(__file__).resolve().parents[1] / "bids_dataset_description_rules.json"

# Keys of the schema's field definitions that describe values (the rest is prose for the spec).
VALUE_KEYS = {"type", "enum", "items", "minItems", "required", "recommended", "properties", "format",
              "anyOf", "pattern"}


def plain(value):
    """A schema node as plain JSON: mappings and lists recursed, prose keys dropped."""
    if hasattr(value, "to_dict"):
        value = value.to_dict()
    if isinstance(value, dict):
        return {key: plain(item) for key, item in value.items()
                if key in VALUE_KEYS or not isinstance(item, str) or key == "name"}
    if isinstance(value, list):
        return [plain(item) for item in value]
    return value


def level_of(rule):
    return rule if isinstance(rule, str) else rule["level"]


def main():
    bids = schema.load_schema()
    rules = bids["rules"]["dataset_metadata"]
    metadata = bids["objects"]["metadata"]
    levels = {name: level_of(rule) for name, rule in rules["dataset_description"]["fields"].items()}
    derivative = {name: level_of(rule) for name, rule in rules["derivative_description"]["fields"].items()}
    fields = {}
    for name in sorted(set(levels) | set(derivative)):
        definition = plain(metadata[name])
        definition.pop("name", None)
        fields[name] = {
            "level": levels.get(name, "optional"),
            "level_if_derivative": derivative.get(name, levels.get(name, "optional")),
            "schema": definition,
        }
    OUT.write_text(json.dumps({
        "source": f"BIDS schema {bids['schema_version']} (bidsschematools {schematools_version}), "
                  f"rules dataset_metadata.dataset_description and derivative_description",
        "bids_version": bids["bids_version"],
        "fields": fields,
    }, indent=1, sort_keys=True) + "\n")


if __name__ == "__main__":
    main()
