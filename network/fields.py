"""Checked access to one mapping of a case file: every read names its key path in errors, and
keys that were never read are reported as unknown (with the nearest known key)."""

from __future__ import annotations

import difflib
import math
import re

from .quantities import Kind, QuantityError, shorten, to_default_unit
from .reading import Document

NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_\-]*$")
"""Tags and names: letters, digits, '-' and '_' (E-101, crude_split); no dots or spaces, which
the path notation uses."""
CONTROL_CHARACTERS = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")
"""Control characters other than tab and line breaks: a terminal acts on them (colours, a bell)
and a workbook cannot hold them."""


class Fields:
    """The mapping at ``path`` in ``doc``. Call :meth:`finish` after reading to reject unknown keys."""

    def __init__(self, doc: Document, path, value, what="a mapping of keys to values"):
        self.doc, self.path = doc, tuple(path)
        if not isinstance(value, dict):
            raise doc.error(self.path, f"expected {what}, got {describe(value)}")
        self.value = value
        self.allowed: set[str] = set()

    def error(self, key, message):
        return self.doc.error(self.path + ((key,) if key is not None else ()), message)

    def one_of_error(self, keys, message, given=()):
        """The error for a section that gives not exactly one of ``keys`` (``given``: those it
        does, the second named): where it gives none, a key of it that is a slip of the keyboard
        for one of them is named instead (a misspelled 'outlet_temprature' had been reported as
        neither key given)."""
        if not given:
            for key in self.value:
                meant = sorted((k for k in keys if isinstance(key, str) and key not in keys and is_misspelling(key, k)),
                               key=lambda k: k.lower() != key.lower())  # "U" is 'u' before it is 'ua'
                if meant:
                    return self.error(key, f"unknown key {shorten(key)} (did you mean '{meant[0]}'?)")
        return self.error(given[1] if len(given) > 1 else None, message)

    def has(self, key) -> bool:
        self.allowed.add(key)
        return key in self.value and self.value[key] is not None

    def raw(self, key, required=True, default=None):
        self.allowed.add(key)
        if key not in self.value or self.value[key] is None:
            if required:
                misspelt = self._misspelling_of(key)
                if misspelt is not None:
                    raise self.error(misspelt, f"missing key '{key}'; found unknown key {shorten(misspelt)} — did you "
                                               f"mean '{key}'?")
                like = self._resembling(key)
                raise self.doc.error(self.path, f"missing key '{key}'" + (
                    f" (if {shorten(like)} is meant for it, write '{key}')"
                    if like is not None else ""))
            return default
        return self.value[key]

    def _misspelling_of(self, key):
        """A key of this mapping, not read so far, that looks like a misspelling of ``key``."""
        unread = [k for k in self.value if isinstance(k, str) and k not in self.allowed]
        for candidate in difflib.get_close_matches(key, unread, n=3):
            if is_misspelling(candidate, key):
                return candidate
        return None

    def _resembling(self, key):
        """A key of this mapping, not read so far, that may stand for ``key`` under another name:
        one shares a word of four letters or more with it (inlet_temperature, temperature for
        supply_temperature) or is its start (supply_temp). Only a hint beside a missing key."""
        words = {w for w in key.lower().split("_") if len(w) >= 4}
        for k in self.value:
            if isinstance(k, str) and k not in self.allowed and (
                    words.intersection(k.lower().split("_")) or (len(k) >= 4 and key.startswith(k))):
                return k
        return None

    def quantity(self, key, kind: Kind, required=True, default=None, minimum=None, maximum=None, above=None):
        value = self.raw(key, required, None)
        if value is None:
            return default
        try:
            number = to_default_unit(value, kind)
        except QuantityError as exc:
            raise self.error(key, str(exc)) from None
        unit = f" {kind.shown_unit}" if kind.shown_unit else ""
        if minimum is not None and number < minimum:
            raise self.error(key, f"{shorten(value)} is below the smallest allowed value, {minimum}{unit}")
        if above is not None and number <= above:
            raise self.error(key, f"{shorten(value)} must be greater than {above}{unit}")
        if maximum is not None and number > maximum:
            raise self.error(key, f"{shorten(value)} is above the largest allowed value, {maximum}{unit}")
        return number

    def integer(self, key, default, minimum=1, maximum=1000):
        """A whole number; required when ``default`` is None."""
        value = self.raw(key, default is None, default)
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(key, f"expected a whole number, got {describe(value)}")
        if not minimum <= value <= maximum:
            raise self.error(key, f"expected a whole number from {minimum} to {maximum}, got {shorten(value)}")
        return value

    def flag(self, key, default=False) -> bool:
        """An optional true/false key."""
        value = self.raw(key, required=False, default=default)
        if not isinstance(value, bool):
            raise self.error(key, f"expected true or false, got {describe(value)}")
        return value

    def text(self, key, required=False, default=None):
        value = self.raw(key, required, default)
        if value is not None and not isinstance(value, str):
            raise self.error(key, f"expected text, got {describe(value)}")
        if value is not None and CONTROL_CHARACTERS.search(value):
            character = CONTROL_CHARACTERS.search(value).group()
            raise self.error(key, f"the text holds the control character {character!r}: write plain text (tabs and "
                                  "line breaks are fine)")
        return value

    def choice(self, key, options, required=True, default=None):
        return self._one_of(key, options, required, default)

    def _one_of(self, key, options, required, default):
        value = self.raw(key, required, default)
        if value is None:
            return None
        if value not in options:
            hint = nearest(value, options)
            raise self.error(key, f"expected one of {', '.join(map(str, options))}; got {shorten(value)}{hint}")
        return value

    def defined_name(self, key, names, required=True, default=None):
        """One of the ``names`` the file defines elsewhere (a fluid of its ``fluids`` section):
        checked like :meth:`choice`, but the schema says only "text", since every file has
        names of its own."""
        return self._one_of(key, names, required, default)

    def temperature_span(self, key, required=True):
        """``[lowest, highest]`` temperatures (°C, units allowed), the highest above the lowest;
        None where the key is absent and not required."""
        from .quantities import TEMPERATURE

        raw = self.raw(key, required, None)
        if raw is None:
            return None
        if not isinstance(raw, list) or len(raw) != 2:
            raise self.error(key, f"expected [lowest, highest] temperature, got {describe(raw)}")
        try:
            low, high = (to_default_unit(v, TEMPERATURE) for v in raw)
        except QuantityError as exc:
            raise self.error(key, str(exc)) from None
        if high <= low:
            raise self.error(key, "the highest temperature must be above the lowest")
        return low, high

    def mapping(self, key, required=False, what="a mapping of keys to values"):
        value = self.raw(key, required, None)
        if value is None:
            return None
        return Fields(self.doc, self.path + (key,), value, what)

    def named_entries(self, key, what):
        """A mapping of names (tags) to mappings; yields (name, Fields)."""
        section = self.mapping(key, what=f"a mapping of {what}")
        if section is None:
            return []
        entries = []
        for name in section.value:
            section.allowed.add(name)
            if not NAME.match(name):
                raise section.error(name, f"{shorten(name)} is not a usable name: use letters, digits, '-' and '_' only")
            entries.append((name, Fields(self.doc, section.path + (name,), section.value[name], f"the settings of {name}")))
        return entries

    def finish(self):
        for key in self.value:
            if key not in self.allowed:
                known = sorted(self.allowed)
                raise self.error(key, f"unknown key {shorten(key)}{nearest(key, known)}; known keys here: {', '.join(known)}")


def is_misspelling(word: str, meant: str) -> bool:
    """Is ``word`` ``meant`` with a slip of the keyboard: at most one edit (insertion, deletion,
    substitution or swap of neighbours) in a key of up to five letters, two in a longer one?
    Tighter than difflib's likeness, so that a different key of similar spelling
    (tube_inner_diameter against tube_outer_diameter) is not taken for a misspelling."""
    return edit_distance(word.lower(), meant.lower()) <= (1 if len(meant) <= 5 else 2)


def edit_distance(a: str, b: str) -> int:
    """Edits (insert, delete, substitute, swap two neighbours) that turn ``a`` into ``b``
    (the optimal string alignment distance).

    >>> edit_distance("arangement", "arrangement"), edit_distance("flwo", "flow")
    (1, 1)
    """
    previous2, previous = None, list(range(len(b) + 1))
    for i, char_a in enumerate(a, 1):
        current = [i] + [0] * len(b)
        for j, char_b in enumerate(b, 1):
            current[j] = min(previous[j] + 1, current[j - 1] + 1, previous[j - 1] + (char_a != char_b))
            if i > 1 and j > 1 and char_a == b[j - 2] and a[i - 2] == char_b:
                current[j] = min(current[j], previous2[j - 2] + 1)
        previous2, previous = previous, current
    return previous[-1]


def nearest(word, options) -> str:
    options = [str(o) for o in options]
    same = [o for o in options if o.lower() == str(word).lower()]  # "U" for "u": the case alone differs
    close = same or difflib.get_close_matches(str(word), options, n=1)
    return f" (did you mean '{close[0]}'?)" if close else ""


def counted(count, noun: str, plural: str | None = None) -> str:
    """``count`` and the noun, plural unless the count is one.

    >>> counted(1, "step"), counted(3, "step"), counted(2, "tear iteration"), counted(0, "cell")
    ('1 step', '3 steps', '2 tear iterations', '0 cells')
    """
    return f"{count:,} {noun if count == 1 else plural or noun + 's'}"


def describe(value) -> str:
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, float) and not math.isfinite(value):
        return f"the non-finite number {value}"
    return f"{type(value).__name__} {shorten(value)}"
