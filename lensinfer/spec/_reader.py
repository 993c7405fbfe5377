"""Strict TOML reading: every key is consumed or reported as unknown."""

from __future__ import annotations

import math
import tomllib

from lensinfer.spec.errors import SpecError

__all__: list[str] = []

_MISSING = object()


def read_text(path: str, what: str) -> str:
    """The text of ``path``; unreadable or non-UTF-8 files raise a SpecError."""
    try:
        with open(path, encoding="utf-8") as fh:
            return fh.read()
    except UnicodeDecodeError:
        raise SpecError(
            path, "", None, f"{what} in UTF-8 text", problem="is not UTF-8 text"
        ) from None
    except OSError as exc:
        reason = exc.strerror or type(exc).__name__
        raise SpecError(
            path, "", None, f"a readable {what}", problem=f"cannot be read ({reason})"
        ) from None


def load_toml(text: str, path: str) -> dict:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SpecError(
            path, "", None, "valid TOML (see https://toml.io)", problem=f"is not valid TOML: {exc}"
        ) from None


class Table:
    """A view of one TOML table that records which keys were read.

    ``finish()`` raises for any key that was never read, so typos are errors.
    """

    def __init__(self, data: dict, path: str, prefix: str = ""):
        if not isinstance(data, dict):
            raise SpecError(path, prefix, data, "a table (section)")
        self.data = data
        self.path = path
        self.prefix = prefix
        self.used: set[str] = set()

    def key(self, name: str) -> str:
        return f"{self.prefix}.{name}" if self.prefix else name

    def has(self, name: str) -> bool:
        return name in self.data

    def raw(self, name: str, default=_MISSING, expected: str | None = None):
        self.used.add(name)
        if name not in self.data:
            if default is _MISSING:
                what = f"a value for '{name}'" + (f": {expected}" if expected else "")
                raise SpecError(self.path, self.key(name), None, what)
            return default
        return self.data[name]

    def table(self, name: str, required: bool = True) -> Table | None:
        if name not in self.data:
            self.used.add(name)
            if required:
                raise SpecError(self.path, self.key(name), None, f"a [{self.key(name)}] section")
            return None
        self.used.add(name)
        return Table(self.data[name], self.path, self.key(name))

    def number(self, name, default=_MISSING, *, positive=False, low=None, high=None, expected=None):
        expected = expected or number_expected(positive, low, high)
        value = self.raw(name, default, expected)
        if value is default and default is not _MISSING:
            return value
        return check_number(
            value,
            self.path,
            self.key(name),
            positive=positive,
            low=low,
            high=high,
            expected=expected,
        )

    def string(self, name, choices=None, default=_MISSING):
        exp_missing = f"one of {', '.join(map(repr, choices))}" if choices else "a string"
        value = self.raw(name, default, exp_missing)
        if value is default and default is not _MISSING:
            return value
        if not isinstance(value, str):
            exp = f"one of {', '.join(map(repr, choices))}" if choices else "a string"
            raise SpecError(self.path, self.key(name), value, exp)
        if choices is not None and value not in choices:
            raise SpecError(
                self.path, self.key(name), value, f"one of {', '.join(map(repr, choices))}"
            )
        return value

    def finish(self, accepted=None):
        unknown = [k for k in self.data if k not in self.used]
        if unknown:
            k = unknown[0]
            acc = accepted if accepted is not None else sorted(self.used)
            raise SpecError(
                self.path,
                self.key(k),
                self.data[k],
                f"only the keys {', '.join(map(repr, acc))} here",
                problem="is not a known key (a typo?)",
            )


def number_expected(positive=False, low=None, high=None) -> str:
    """Plain words for a number's accepted range."""
    if low is not None and high is not None:
        return f"a number between {low} and {high}"
    if positive and high is not None:
        return f"a positive number up to {high}"
    parts = ["a positive number" if positive else "a number"]
    if low is not None:
        parts.append(f">= {low}")
    elif high is not None:
        parts.append(f"<= {high}")
    return " ".join(parts)


def check_number(value, path, key, *, positive=False, low=None, high=None, expected=None):
    ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
    if ok and positive and value <= 0:
        ok = False
    if ok and low is not None and value < low:
        ok = False
    if ok and high is not None and value > high:
        ok = False
    if not ok:
        raise SpecError(path, key, value, expected or number_expected(positive, low, high))
    return float(value)
