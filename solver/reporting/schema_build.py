"""JSON Schemas of the four input files, made from the keys the readers themselves ask for.

One source of truth: the readers (network/case.py, study.py, monitoring_file.py,
schedule_file.py) read every key through :class:`hxtrain.network.fields.Fields`. While a
corpus of files is read, :class:`Recorder` notes every key each reader asks for, at which key
path, how (a quantity of a kind with its unit and plausible range, a whole number with its
range, a choice, text, true/false, a mapping, a mapping of names), whether it was required, and
which mappings hold names (tags, key paths) rather than keys. The schema is built from those
notes alone: a key no reader asks for is not in it, and every key a reader asks for is.

The corpus is every bundled file and the test corpora (tests/valid, tests/malformed*): the
malformed files reach the readers' rarer branches (geometry, cp tables, ...). A key is required
where every read that reached its mapping asked for it as required, counting only the reads that
succeeded where a mapping has any (a read stopped by an error asks for nothing after it). What a reader reads without Fields is
added from the reader's own tables: a study's changes (network/changes.py: VERBS and the keys
each takes). Mappings whose keys are names but are read one key at a time are listed in
:data:`NAMED_MAPPINGS`.

Run ``python -m hxtrain.solver.reporting.schema_build`` from a checkout to write the shipped
schemas (solver/reporting/schemas/); tests/test_schemas.py fails when they are out of date.
"""

from __future__ import annotations

import contextlib
import json
import threading
from collections import defaultdict
from pathlib import Path

from hxtrain.network import fields as fields_module
from hxtrain.network import quantities as q

KINDS = ("case", "study", "monitoring", "schedule")
NAMED_MAPPINGS = {"monitoring": [("limits", "fired_duty"), ("limits", "inlet_temperature")]}
"""Mappings of names read key by key (heater tags to their limits), by file kind."""
NUMBER_WITH_UNIT = r"^\s*[-+−]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*\S.*$"
SCHEMA_FOLDER = Path(__file__).parent / "schemas"
_LOCAL = threading.local()


class Recorder:
    """What the readers asked for while it was active (see :func:`recording`)."""

    def __init__(self):
        self.instances = []
        """One entry per Fields object: [doc file, concrete path, {key: [forms]}, required keys,
        raw-asked keys, directly allowed keys, read number]."""
        self.named = defaultdict(set)
        """doc file -> concrete paths of mappings whose keys are names."""
        self.read = 0
        self.succeeded = set()

    def entry(self, f):
        if not hasattr(f, "_recorded"):
            f._recorded = [f.doc.file, tuple(f.path), defaultdict(list), set(), set(), set(), self.read]
            self.instances.append(f._recorded)
        return f._recorded


@contextlib.contextmanager
def recording():
    """Patch :class:`Fields` so that every key asked for is noted; restore it afterwards."""
    recorder, cls = Recorder(), fields_module.Fields
    original = {name: getattr(cls, name) for name in ("__init__", "raw", "has", "quantity", "integer", "flag", "text",
                                                      "choice", "defined_name", "mapping", "named_entries")}

    class Allowed(set):
        def __init__(self, owner):
            super().__init__()
            self.owner = owner

        def add(self, key):
            if not getattr(_LOCAL, "asking", False):
                recorder.entry(self.owner)[5].add(key)
            super().add(key)

    def init(self, doc, path, value, what="a mapping of keys to values"):
        original["__init__"](self, doc, path, value, what)
        self.allowed = Allowed(self)
        recorder.entry(self)

    def quietly(method, *args):
        """``method`` adding the key it asks for to ``allowed``: not a name put there directly."""
        _LOCAL.asking = True
        try:
            return method(*args)
        finally:
            _LOCAL.asking = False

    def asking(method, form):
        def wrapped(self, key, *args, **kwargs):
            entry = recorder.entry(self)
            entry[2][key].append(form(*args, **kwargs) if form else ("any",))
            entry[4].add(key)
            if form is None:
                return quietly(method, self, key, *args)
            return method(self, key, *args, **kwargs)
        return wrapped

    def raw(self, key, required=True, default=None):
        entry = recorder.entry(self)
        entry[2][key].append(("any",))
        entry[4].add(key)
        if required:
            entry[3].add(key)
        return quietly(original["raw"], self, key, required, default)

    def named_entries(self, key, what):
        recorder.named[self.doc.file].add(tuple(self.path) + (key,))
        return asking(original["named_entries"], lambda *a, **k: ("names",))(self, key, what)

    forms = {
        "quantity": lambda kind, *a, **k: ("quantity", kind),
        "integer": lambda default, minimum=1, maximum=1000: ("integer", minimum, maximum),
        "flag": lambda *a, **k: ("boolean",), "text": lambda *a, **k: ("string",),
        "choice": lambda options, *a, **k: ("enum", tuple(options)), "mapping": lambda *a, **k: ("object",),
        "defined_name": lambda *a, **k: ("string",),
        "has": None,
    }
    patched = {name: asking(original[name], form) for name, form in forms.items()}
    patched.update(__init__=init, raw=raw, named_entries=named_entries)
    try:
        for name, method in patched.items():
            setattr(cls, name, method)
        yield recorder
    finally:
        for name, method in original.items():
            setattr(cls, name, method)


def kind_of(data) -> str:
    """Which reader a file is for, from its top-level keys."""
    keys = set(data) if isinstance(data, dict) else set()
    if "base" in keys:
        return "study"
    if keys & {"tags", "data", "window"}:
        return "monitoring"
    if keys & {"horizon", "start", "cleaning", "operation"}:
        return "schedule"
    return "case"


def loader(kind):
    from hxtrain.network.case import load_case
    from hxtrain.network.monitoring_file import load_monitoring
    from hxtrain.network.schedule_file import load_schedule
    from hxtrain.network.study import load_study

    return {"case": load_case, "study": load_study, "monitoring": load_monitoring, "schedule": load_schedule}[kind]


def read_corpus(files) -> tuple[Recorder, dict]:
    """Read every file with its reader while recording; returns the recorder and, per kind, the
    files read (their names as the readers give them)."""
    from hxtrain.network.errors import HxtrainError
    from hxtrain.network.reading import read_document

    read = defaultdict(list)
    with recording() as recorder:
        for path in files:
            try:
                document = read_document(path)
            except HxtrainError:
                continue
            kind = kind_of(document.data)
            recorder.read += 1
            try:
                loader(kind)(path)
                recorder.succeeded.add(recorder.read)
            except HxtrainError:
                pass
            read[kind].append(document.file)
    return recorder, read


def corpus(root: Path) -> list[Path]:
    """The bundled files and, in a checkout, the test corpora."""
    cases = root / "cases"
    files = sorted(cases.glob("*.yaml")) + sorted((cases / "plant_data").glob("*.yaml"))
    for folder in ("tests/valid", "tests/malformed", "tests/malformed_monitoring", "tests/malformed_schedules"):
        files += sorted(p for p in (root / folder).glob("*.yaml") if p.name != "MANIFEST.yaml")
    return files


# ----------------------------------------------------------------------------- the schema


def _named(recorder: Recorder, kind: str) -> dict:
    """doc file -> concrete paths of mappings of names: named entries, mappings whose keys
    were allowed directly and never asked for, and :data:`NAMED_MAPPINGS`."""
    named = {file: set(paths) for file, paths in recorder.named.items()}
    for file, path, asked, _, raw, direct, _ in recorder.instances:
        if direct and not raw:
            named.setdefault(file, set()).add(path)
    for file in {i[0] for i in recorder.instances}:
        named.setdefault(file, set()).update(NAMED_MAPPINGS.get(kind, ()))
    return named


def _pattern(path, named_paths) -> tuple:
    pattern = []
    for i, part in enumerate(path):
        if isinstance(part, int):
            pattern.append("[]")
        elif tuple(path[:i]) in named_paths:
            pattern.append("*")
        else:
            pattern.append(part)
    return tuple(pattern)


def observations(recorder: Recorder, kind: str, files) -> dict:
    """Pattern path -> {"keys": {key: forms}, "required": keys required in every successful
    read, "object": True} for the files of one kind."""
    files = set(files)
    named = _named(recorder, kind)
    nodes = {}
    for file, path, asked, required, raw, direct, read in recorder.instances:
        if file not in files:
            continue
        pattern = _pattern(path, named.get(file, set()))
        node = nodes.setdefault(pattern, {"keys": defaultdict(set), "required": None, "named": path in named[file],
                                          "entries": path in recorder.named.get(file, ()), "by_read": {}})
        if node["named"]:
            continue
        for key, forms in asked.items():
            if not isinstance(key, int):
                node["keys"][key].update(forms)
        node["by_read"].setdefault(read in recorder.succeeded, []).append(set(required))
    for node in nodes.values():
        # required where every read that reached this mapping asked for it as required; only the
        # reads that succeeded count where there are any, since a read stopped by an error (a
        # malformed file) never asks for the keys after the one it stopped at
        reads = node.pop("by_read", {})
        sets = reads.get(True) or reads.get(False)
        if sets:
            node["required"] = set.intersection(*sets)
    return nodes


def _quantity(kind: q.Kind) -> dict:
    number = {"type": "number"}
    if kind.low > -float("inf"):
        number["minimum"] = kind.low
    if kind.high < float("inf"):
        number["maximum"] = kind.high
    unit = f" in {kind.shown_unit}" if kind.shown_unit else ""
    return {"description": f"{kind.name}: a number{unit}, or text with units such as {kind.example}",
            "anyOf": [number, {"type": "string", "pattern": NUMBER_WITH_UNIT}]}


def _form(form) -> dict | None:
    name = form[0]
    if name == "quantity":
        return _quantity(form[1])
    if name == "integer":
        return {"type": "integer", "minimum": form[1], "maximum": form[2]}
    if name == "boolean":
        return {"type": "boolean"}
    if name == "string":
        return {"type": "string"}
    if name == "enum":
        return {"enum": list(form[1])}
    return None


def _value(nodes, pattern, forms, extra) -> dict:
    """The schema of one key's value from how it was read and what was read below it."""
    key = pattern[-1]
    if key in extra:
        return extra[key]
    choices = [s for s in (_form(f) for f in sorted(forms, key=repr)) if s is not None]
    unique = []
    for choice in choices:
        if choice not in unique:
            unique.append(choice)
    below = True
    if pattern in nodes and nodes[pattern]["named"] or ("names",) in forms:
        unique.append(_names(nodes, pattern, extra))
    elif pattern in nodes:
        unique.append(_node(nodes, pattern, extra))
    elif pattern + ("[]",) in nodes:
        unique.append({"type": "array", "items": _node(nodes, pattern + ("[]",), extra)})
    else:
        below = False
    if below and not forms & {("object",), ("names",)} and len(unique) == 1:
        unique.append({"not": {"type": "object"}})  # read as it is, or as a mapping (cp: 2.1 or {table: ...})
    if not unique:
        return {}
    return unique[0] if len(unique) == 1 else {"anyOf": unique}


def _names(nodes, pattern, extra) -> dict:
    child = pattern + ("*",)
    value = _node(nodes, child, extra) if child in nodes and not nodes[child]["named"] else {}
    if value and not nodes.get(pattern, {}).get("entries", True):
        value = {"anyOf": [value, {"not": {"type": "object"}}]}  # a name's value read as it is, or as a mapping
    return {"type": "object", "additionalProperties": value}


def _node(nodes, pattern, extra) -> dict:
    node = nodes[pattern]
    if node["named"]:
        return {"type": "object"}
    properties = {key: _value(nodes, pattern + (key,), forms, extra) for key, forms in sorted(node["keys"].items())}
    schema = {"type": "object", "properties": properties, "additionalProperties": False}
    required = sorted(node["required"] or ())
    if required:
        schema["required"] = required
    return schema


def change_schema() -> dict:
    """A study's change, from the change reader's own table of verbs and the keys each takes."""
    from hxtrain.network.changes import VERBS, _VERB_KEYS  # the reader's table (read without Fields)

    return {"type": "array", "items": {"oneOf": [
        {"type": "object", "required": [verb, *sorted(_VERB_KEYS[verb])], "additionalProperties": False,
         "properties": {verb: {"type": "string"}, "description": {"type": "string"},
                        **{key: {} for key in sorted(_VERB_KEYS[verb])}}} for verb in VERBS]}}


TITLES = {"case": "hxtrain case file", "study": "hxtrain study file", "monitoring": "hxtrain monitoring file",
          "schedule": "hxtrain schedule file"}


def build(kind: str, recorder: Recorder, files) -> dict:
    """The JSON Schema of one file kind from what its reader asked for in ``files``."""
    nodes = observations(recorder, kind, files)
    extra = {"changes": change_schema()} if kind == "study" else {}
    schema = _node(nodes, (), extra)
    return {"$schema": "https://json-schema.org/draft/2020-12/schema",
            "$id": f"hxtrain-{kind}.schema.json", "title": TITLES[kind],
            "description": "Made from the keys the hxtrain reader asks for (solver/reporting/schema_build.py); "
                           "values with units are numbers in the default unit or text such as '480 degF'.",
            **schema}


def build_all(root: Path) -> dict:
    recorder, read = read_corpus(corpus(root))
    return {kind: build(kind, recorder, read[kind]) for kind in KINDS}


def schema_json(schema: dict) -> str:
    return json.dumps(schema, indent=1, ensure_ascii=False, sort_keys=False) + "\n"


if __name__ == "__main__":  # pragma: no cover
    import sys

    root = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2]
    SCHEMA_FOLDER.mkdir(exist_ok=True)
    for kind, schema in build_all(root).items():
        (SCHEMA_FOLDER / f"{kind}.schema.json").write_text(schema_json(schema), encoding="utf-8")
        print(f"wrote {SCHEMA_FOLDER / f'{kind}.schema.json'}")
