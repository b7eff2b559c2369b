"""Safe reading of YAML case files into plain Python data plus a map of key paths to lines.

Only YAML's plain data types are built (no object construction). A duplicated key, a document
that grows past a node budget through anchors and aliases, bytes that are not UTF-8, an empty
file and a file over the size limit are all errors naming the file (and the line where known).
"""

from __future__ import annotations

import stat
from dataclasses import dataclass, field
from pathlib import Path

import yaml

from .errors import CaseError

MAX_FILE_BYTES = 4 * 1024 * 1024
"""Case files are a few kB; a limit of 4 MiB stops a wrong file being read into memory."""

MAX_NODES = 200_000
"""Node budget after alias expansion: far above any real case, far below an alias bomb."""

COMPOSER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
"""libyaml's parser where PyYAML has it (several times faster; it also caps flow nesting at
1000 levels); the scalars are built by the Python safe constructor either way."""


@dataclass
class Document:
    """A loaded YAML document: its data, the file it came from and the line of each key path."""

    data: object
    file: str
    lines: dict[tuple, int] = field(default_factory=dict)

    def line_of(self, path) -> int | None:
        path = tuple(path)
        while path:
            if path in self.lines:
                return self.lines[path]
            path = path[:-1]
        return None

    def error(self, path, message) -> CaseError:
        return CaseError(message, file=self.file, path=path, line=self.line_of(path))


class _Builder:
    """Turns a composed YAML node tree into dicts, lists and scalars, recording lines."""

    def __init__(self, file):
        self.file = file
        self.lines: dict[tuple, int] = {}
        self.count = 0
        self.scalars = yaml.SafeLoader("")  # only its scalar resolution/construction is used

    def build(self, node, path):
        self.count += 1
        if self.count > MAX_NODES:
            raise CaseError(
                f"the document expands to more than {MAX_NODES} values (anchors and aliases "
                "repeating themselves?); a case file is far smaller",
                file=self.file,
            )
        self.lines.setdefault(path, node.start_mark.line + 1)
        if isinstance(node, yaml.MappingNode):
            return self._mapping(node, path)
        if isinstance(node, yaml.SequenceNode):
            return [self.build(item, path + (i,)) for i, item in enumerate(node.value)]
        return self.scalar(node, path)

    def scalar(self, node, path):
        """A scalar's value; a whole number too long for Python to read (over 4300 digits) is an
        error at its line, not a crash."""
        try:
            value = self.scalars.construct_object(node, deep=True)
        except ValueError:
            raise CaseError(f"a number of {len(node.value)} characters: far beyond any value a case file needs",
                            file=self.file, path=path, line=node.start_mark.line + 1) from None
        if isinstance(value, (int, float)) and not isinstance(value, bool) and isinstance(node.value, str):
            self._refuse_yaml11_number(node, value, path)
        return value

    def _refuse_yaml11_number(self, node, value, path):
        """YAML 1.1 (PyYAML's schema) reads '040' as octal 32 and '1:20' in base 60 as 80, where a
        person reading the file (and YAML 1.2) sees 40 and a time: refused rather than guessed."""
        text = node.value.strip().lstrip("+-").replace("_", "")
        if ":" in text:
            reading = "base 60, as a time; write the number meant"
        elif len(text) > 1 and text[0] == "0" and text.isdigit() and int(text, 10) != value:
            sign = "-" if node.value.strip().startswith("-") else ""
            reading = f"octal, for the leading zero; write {sign}{int(text, 10)}"
        else:
            return
        raise CaseError(f"{node.value!r} is read by YAML as {value!r} ({reading})", file=self.file, path=path,
                        line=node.start_mark.line + 1)

    def _mapping(self, node, path):
        result = {}
        for key_node, value_node in node.value:
            if key_node.tag == "tag:yaml.org,2002:merge":
                raise CaseError("merge keys ('<<') are not supported in case files", file=self.file,
                                path=path, line=key_node.start_mark.line + 1)
            if not isinstance(key_node, yaml.ScalarNode):
                raise CaseError("a key must be a plain name", file=self.file, path=path,
                                line=key_node.start_mark.line + 1)
            key = self.scalar(key_node, path)
            key = str(key) if isinstance(key, (int, float)) and not isinstance(key, bool) else key
            if not isinstance(key, str):
                raise CaseError(f"a key must be a plain name, got {type(key).__name__}", file=self.file, path=path,
                                line=key_node.start_mark.line + 1)
            if key in result:
                raise CaseError(
                    f"key '{key}' appears twice in the same mapping (second time here); YAML would "
                    "silently keep only the last one",
                    file=self.file,
                    path=path + (key,),
                    line=key_node.start_mark.line + 1,
                )
            self.lines[path + (key,)] = key_node.start_mark.line + 1
            result[key] = self.build(value_node, path + (key,))
        return result


def read_text(path) -> tuple[str, str]:
    """Read a file as UTF-8 text with the size limit; returns (text, file name for messages)."""
    path = Path(path)
    name = str(path)
    try:
        if path.is_dir():
            raise CaseError("this is a directory, not a file", file=name)
        if path.exists() and not stat.S_ISREG(path.stat().st_mode):
            raise CaseError("this is not a regular file (a device or a pipe?); give a case file", file=name)
        with path.open("rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
        if len(raw) > MAX_FILE_BYTES:
            raise CaseError(f"the file is over the {MAX_FILE_BYTES}-byte limit for case files", file=name)
    except FileNotFoundError:
        raise CaseError("no such file", file=name) from None
    except PermissionError:
        raise CaseError("the file cannot be read (permission denied)", file=name) from None
    except OSError as exc:
        raise CaseError(f"the file cannot be read ({exc.strerror or exc})", file=name) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise CaseError(f"byte {exc.start} is not valid UTF-8; save the file as UTF-8", file=name, line=line) from None
    return text.removeprefix("\ufeff"), name


def parse_yaml(text, name) -> Document:
    """Parse YAML text (safe: plain data types only) into a :class:`Document`."""
    if not text.strip():
        raise CaseError("the file is empty", file=name)
    try:
        nodes = list(yaml.compose_all(text, Loader=COMPOSER))
    except RecursionError:
        raise CaseError("the document nests too deeply to be a case file", file=name) from None
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        problem = " ".join(str(p) for p in (exc.context, exc.problem) if p)
        if "nesting depth" in problem:  # libyaml's cap on nesting
            problem = "the document nests too deeply to be a case file"
        else:
            column = f" (column {mark.column + 1})" if mark else ""
            problem = (f"not valid YAML{column}: {problem}. Look at this line and the one above it for what "
                       f"usually causes this: keys of one mapping not starting in the same column, a key "
                       f"without ': ' after it, a tab used to indent, an unclosed [ or {{ or quote")
        raise CaseError(problem, file=name, line=mark.line + 1 if mark else None) from None
    except yaml.YAMLError as exc:
        raise CaseError(f"not valid YAML: {exc}", file=name) from None
    nodes = [n for n in nodes if n is not None]
    if not nodes:
        raise CaseError("the file holds no YAML document (only comments?)", file=name)
    if len(nodes) > 1:
        raise CaseError("the file holds more than one YAML document ('---'); a case is one document", file=name)
    builder = _Builder(name)
    try:
        data = builder.build(nodes[0], ())
    except yaml.constructor.ConstructorError as exc:
        mark = exc.problem_mark
        raise CaseError(f"unsupported YAML value: {exc.problem}", file=name, line=mark.line + 1 if mark else None) from None
    except RecursionError:
        raise CaseError("the document nests too deeply (a recursive alias?)", file=name) from None
    return Document(data, name, builder.lines)


def read_document(path) -> Document:
    """Read and parse a YAML case file."""
    text, name = read_text(path)
    return parse_yaml(text, name)


FILE_KINDS = (("case file", ("streams", "fluids", "exchangers"), "hxtrain run or hxtrain check"),
              ("study file", ("base",), "hxtrain compare, sweep or uncertainty"),
              ("monitoring file", ("tags", "data"), "hxtrain monitor"),
              ("schedule file", ("horizon", "cleaning"), "hxtrain schedule"))
"""Each kind of input file, the top-level keys only it has, and the command that takes it."""


def refuse_other_kind(doc: Document, expected: str):
    """A CaseError when ``doc`` (read as an ``expected`` kind of :data:`FILE_KINDS`) has none of
    that kind's own keys and a key of another kind: the wrong kind of file was given, and the
    message says which kind it looks like and which command takes it."""
    if not isinstance(doc.data, dict):
        return
    own = {kind: [k for k in keys if k in doc.data] for kind, keys, _ in FILE_KINDS}
    if own[expected]:
        return
    for kind, _, command in FILE_KINDS:
        if own[kind]:
            raise doc.error((own[kind][0],), f"this looks like a {kind} (it has '{own[kind][0]}'), not a {expected}: "
                                             f"{command} takes it")
