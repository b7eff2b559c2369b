"""JSON Schemas of the input files: made from the keys the readers ask for, shipped with the
package, and in agreement with the readers on every key of every bundled file."""

import json
import re
from pathlib import Path

import jsonschema
import pytest
import yaml

from hxtrain.solver.reporting import schema_build
from hxtrain.solver.reporting.schema import KINDS, schema_text

from cli_helpers import run_in_process

ROOT = Path(__file__).resolve().parents[1]
BUNDLED = sorted((ROOT / "cases").glob("*.yaml")) + sorted((ROOT / "cases" / "plant_data").glob("*.yaml"))


@pytest.fixture(scope="module")
def recorded():
    return schema_build.read_corpus(schema_build.corpus(ROOT))


def shipped(kind):
    return json.loads(schema_text(kind))


def test_every_kind_of_bundled_file_is_there():
    kinds = {schema_build.kind_of(yaml.safe_load(p.read_text())) for p in BUNDLED}
    assert kinds == set(KINDS)
    assert (ROOT / "cases" / "crude_schedule.yaml") in BUNDLED


def test_the_shipped_schemas_are_those_the_readers_make_now(recorded):
    """A key a reader asks for that the shipped schema lacks (or the reverse) fails here: run
    `python -m hxtrain.solver.reporting.schema_build` to bring the schemas up to date."""
    recorder, read = recorded
    for kind in KINDS:
        assert schema_build.build(kind, recorder, read[kind]) == shipped(kind), \
            f"the {kind} schema is out of date: python -m hxtrain.solver.reporting.schema_build"


@pytest.mark.parametrize("path", BUNDLED, ids=lambda p: p.name)
def test_every_bundled_file_is_valid_against_its_schema(path):
    data = yaml.safe_load(path.read_text())
    schema = shipped(schema_build.kind_of(data))
    jsonschema.Draft202012Validator.check_schema(schema)
    errors = [f"{'.'.join(map(str, e.absolute_path))}: {e.message}"
              for e in jsonschema.Draft202012Validator(schema).iter_errors(data)]
    assert not errors, errors


def _properties_at(schema, path):
    """The keys the schema knows at a key path of a document (names and list items followed)."""
    node = schema
    for part in path:
        node = _object(node)
        if isinstance(part, int):
            node = node.get("items", {})
        elif part in node.get("properties", {}):
            node = node["properties"][part]
        else:
            node = node.get("additionalProperties", {})
    return set(_object(node).get("properties", {}))


def _object(node):
    for choice in node.get("anyOf", []):
        if choice.get("type") in ("object", "array"):
            return choice
    return node


def _mappings(data, path=()):
    if isinstance(data, dict):
        yield path, data
        for key, value in data.items():
            yield from _mappings(value, path + (key,))
    elif isinstance(data, list):
        for i, value in enumerate(data):
            yield from _mappings(value, path + (i,))


@pytest.mark.parametrize("path", BUNDLED, ids=lambda p: p.name)
def test_schema_and_reader_agree_on_every_key_of_a_bundled_file(path):
    """Each key the reader asks for while reading the file is in the schema at that place, and
    each key of the file that the schema lists as a key the reader asked for."""
    data = yaml.safe_load(path.read_text())
    kind = schema_build.kind_of(data)
    schema = shipped(kind)
    recorder, read = schema_build.read_corpus([path])
    assert recorder.succeeded, f"the {kind} reader refused {path}"
    named = schema_build._named(recorder, kind)
    asked = {}
    for file, where, keys, *_ in recorder.instances:
        if file in read[kind] and where not in named.get(file, ()):
            asked.setdefault(where, set()).update(k for k in keys if isinstance(k, str))
    for where, keys in asked.items():
        missing = keys - _properties_at(schema, where)
        assert not missing, f"{path.name}: the reader asks for {sorted(missing)} at {'.'.join(map(str, where))}"
    for where, mapping in _mappings(data):
        known = _properties_at(schema, where)
        if known:  # a mapping of keys (not of names): each key of the file is one the reader asked for
            for key in mapping:
                assert key in known and key in asked.get(where, set()), \
                    f"{path.name}: {'.'.join(map(str, where + (key,)))} is not a key both know"


MANIFESTS = [ROOT / "tests" / folder / "MANIFEST.yaml"
             for folder in ("malformed", "malformed_monitoring", "malformed_schedules")]


def _unknown_key_files():
    """Malformed files refused for an unknown key, less those whose key is known under another
    choice at the same place (a fouling model's parameters depend on the model, and the schema,
    without conditions, lists the keys of every model)."""
    for manifest in MANIFESTS:
        document = yaml.safe_load(manifest.read_text())
        for entry in document.get("cases", []) + document.get("refused", []):
            found = re.search(r"unknown key '([^']+)'", str(entry.get("fragment", "")))
            path = manifest.parent / entry["file"]
            if found and f'"{found.group(1)}"' not in schema_text(schema_build.kind_of(yaml.safe_load(path.read_text()))):
                yield path


@pytest.mark.parametrize("path", list(_unknown_key_files()), ids=lambda p: p.name)
def test_a_key_the_reader_refuses_the_schema_refuses_too(path):
    data = yaml.safe_load(path.read_text())
    schema = shipped(schema_build.kind_of(data))
    assert list(jsonschema.Draft202012Validator(schema).iter_errors(data)), f"the schema accepts {path.name}"


@pytest.mark.parametrize("kind", KINDS)
def test_hxtrain_schema_prints_the_shipped_schema(kind, capsys):
    code, out, err = run_in_process(capsys, "schema", kind)
    assert code == 0, err
    assert json.loads(out) == shipped(kind)
    assert json.loads(out)["$schema"].startswith("https://json-schema.org/draft/2020-12")


def test_a_case_with_names_of_its_own_is_valid_against_the_schema(tmp_path, capsys):
    """A stream's fluid is one of the names the file itself defines: any name the user chooses
    is valid in the schema (the reader checks it against the fluids section), not only the
    names the bundled files happen to use."""
    data = yaml.safe_load((Path(__file__).parent / "valid" / "small_train.yaml").read_text())
    renamed = {f"fluid_nobody_used_{k}": v for k, v in enumerate(data["fluids"].values())}
    old_to_new = dict(zip(data["fluids"], renamed))
    data["fluids"] = renamed
    for stream in data["streams"].values():
        stream["fluid"] = old_to_new[stream["fluid"]]
    path = tmp_path / "own_names.yaml"
    path.write_text(yaml.safe_dump(data))
    code, out, err = run_in_process(capsys, "check", str(path))
    assert code == 0, err
    errors = list(jsonschema.Draft202012Validator(shipped("case")).iter_errors(data))
    assert not errors, [e.message for e in errors]


def test_keys_every_successful_read_requires_are_required_in_the_schema():
    """A read stopped by an error (a malformed file) asks for nothing after the key it stopped
    at; it must not make later keys optional. Keys the reader always requires are required in
    the schema: an exchanger's arrangement, a stream's fluid, flow, supply temperature and path,
    both outlets of a flash drum and each outlet's fluid and path."""
    case = shipped("case")["properties"]
    assert "arrangement" in case["exchangers"]["additionalProperties"]["required"]
    assert set(case["streams"]["additionalProperties"]["required"]) >= {"fluid", "flow", "supply_temperature", "path"}
    drum = case["flash_drums"]["additionalProperties"]
    assert set(drum["required"]) == {"vapour", "liquid"}
    for port in ("vapour", "liquid"):
        assert set(drum["properties"][port]["required"]) == {"fluid", "path"}
