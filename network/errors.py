"""hxtrain's errors: one root, :class:`HxtrainError`, and the error for bad input,
:class:`CaseError`, which names the file, the key path and (where known) the line. Each error
class carries the exit code the command line gives for it."""

from __future__ import annotations


def format_path(path) -> str:
    """('exchangers', 'E-101', 'area') -> 'exchangers.E-101.area'; list indices as [i]."""
    text = ""
    for part in path:
        if isinstance(part, str) and not part.isprintable():
            part = repr(part)[1:-1]  # a key with control characters must not act on the terminal
        if isinstance(part, str) and len(part) > 60:
            part = part[:45] + f"...({len(part)} characters)"
        if isinstance(part, int):
            text += f"[{part}]"
        else:
            text += ("." if text else "") + str(part)
    return text


class HxtrainError(Exception):
    """The root of every error hxtrain raises on purpose (anything else is a bug)."""

    exit_code = 1


class CaseError(HxtrainError):
    """Bad input. ``str()`` is one short paragraph: file, key path, line, what is wrong."""

    exit_code = 2

    def __init__(self, message, *, file=None, path=(), line=None):
        self.message = message
        self.file = None if file is None else str(file)
        self.path = tuple(path)
        self.line = line
        super().__init__(self.describe())

    def describe(self) -> str:
        where = []
        if self.file:
            where.append(self.file)
        if self.path:
            where.append(format_path(self.path))
        if self.line is not None:
            where.append(f"line {self.line}")
        prefix = ", ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message
