"""Reading study files (edge layer): TOML text to checked Python values, with key paths.

Every error names the key path (``line.length``, ``material[2].cost.exponent``), the rule and
what was found, and raises :class:`StudyFileError` (an :class:`~pipeopt.errors.InputError`, so a
``ValueError``). Unknown keys are refused with the nearest valid key suggested.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from pathlib import Path
from typing import Any

from .errors import InputError
from .units import KINDS, to_si

__all__ = ["StudyFileError", "Section", "read_toml", "StudyFileMixin"]


class StudyFileError(InputError):
    """A study file broke a rule; the message starts with the key path."""


def read_toml(path: str | Path) -> dict[str, Any]:
    """Parse a TOML study file; a syntax error names the line and column.

    Raises
    ------
    StudyFileError
        For a missing or unreadable file, or TOML syntax errors.
    """
    p = Path(path)
    try:
        data = p.read_bytes()
    except FileNotFoundError:
        raise StudyFileError(f"study file {str(p)!r} not found") from None
    except OSError as exc:
        raise StudyFileError(f"study file {str(p)!r} cannot be read: {exc.strerror}") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise StudyFileError(f"study file {str(p)!r} is not UTF-8 text (byte {exc.start})") \
            from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyFileError(f"{p.name}: TOML syntax error: {exc}") from None


class StudyFileMixin:
    """``from_toml``, ``from_dict`` and ``demo`` for a study class with a ``_from_dict``.

    The class defines ``_from_dict(mapping, base)`` (``base``: the folder relative paths in the
    file refer to) and ``_DEMO_FILE`` (a file in ``pipeopt/data``).
    """

    _DEMO_FILE = ""

    @classmethod
    def from_toml(cls, path: str | Path):
        """Read a study file; relative paths in it refer to its own folder."""
        p = Path(path)
        return cls.from_dict(read_toml(p), base_dir=p.parent)

    @classmethod
    def from_dict(cls, mapping: dict, base_dir: str | Path | None = None):
        """Build the study from a mapping with the study-file outline.

        Raises
        ------
        StudyFileError
            Naming the key path, the rule and the value of any bad entry.
        """
        try:
            return cls._from_dict(mapping, Path(base_dir) if base_dir else Path.cwd())
        except StudyFileError:
            raise
        except InputError as exc:
            raise StudyFileError(str(exc)) from None

    @classmethod
    def demo(cls, name: str | None = None):
        """The bundled demonstration study of this kind (an invented scenario; illustrative).

        ``name`` picks another bundled demo of the kind, ``pipeopt/data/demo_<name>.toml``
        (e.g. ``SizingStudy.demo("longline")``).
        """
        from importlib import resources

        file = cls._DEMO_FILE if name is None else f"demo_{name}.toml"
        data = resources.files("pipeopt").joinpath("data")
        if not data.joinpath(file).is_file():
            known = sorted(p.name[5:-5] for p in data.iterdir()
                           if p.name.startswith("demo_") and p.name.endswith(".toml"))
            raise InputError(f"demo: no bundled demo {name!r}; demos: {', '.join(known)}")
        return cls.from_dict(tomllib.loads(data.joinpath(file).read_text("utf-8")))


def _kind_word(value: Any) -> str:
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__


class Section:
    """A table of a study file with its allowed keys; unknown keys are refused on entry."""

    def __init__(self, data: Any, path: str, allowed: tuple[str, ...]) -> None:
        if not isinstance(data, dict):
            raise StudyFileError(f"{path}: expected a table (a [{path}] section or "
                                 f"{{ key = value }}), got {_kind_word(data)}")
        self.data = data
        self.path = path
        self.allowed = allowed
        self.finish()  # a typo is reported before a 'missing key' it may have caused

    def key(self, name: str) -> str:
        return f"{self.path}.{name}" if self.path else name

    def has(self, name: str) -> bool:
        return name in self.data

    def finish(self) -> None:
        """Refuse unknown keys, naming the nearest valid one."""
        for k in self.data:
            if k not in self.allowed:
                near = difflib.get_close_matches(str(k), self.allowed, n=1, cutoff=0.5)
                hint = f"; did you mean {self.key(near[0])!r}?" if near else ""
                valid = ", ".join(self.allowed)
                raise StudyFileError(f"{self.key(str(k))}: unknown key{hint} (valid keys in "
                                     f"{self.path or 'the file'}: {valid})")

    # ----- typed readers --------------------------------------------------------------------
    def raw(self, name: str, default: Any = None) -> Any:
        return self.data.get(name, default)

    def required(self, name: str) -> Any:
        if name not in self.data:
            raise StudyFileError(f"{self.key(name)}: required key is missing")
        return self.data[name]

    def quantity(self, name: str, kind: str, default: Any = None, required: bool = True,
                 positive: bool = True, nonnegative: bool = False) -> float | None:
        """A dimensional value written with its unit, e.g. ``"3.2 km"``, returned in SI."""
        if name not in self.data:
            if required and default is None:
                raise StudyFileError(f"{self.key(name)}: required key is missing (write it with "
                                     f"a unit, e.g. {name} = \"{KINDS[kind].example}\")")
            if default is None:
                return None
            value = default
        else:
            value = self.data[name]
        if isinstance(value, (bool, dict, list)):
            raise StudyFileError(f"{self.key(name)}: expected {KINDS[kind].description} such as "
                                 f"\"{KINDS[kind].example}\", got {_kind_word(value)}")
        try:
            out = to_si(value, kind, self.key(name))
        except InputError as exc:
            raise StudyFileError(str(exc)) from None
        if not isinstance(out, float):
            raise StudyFileError(f"{self.key(name)}: expected a single value")
        if positive and not nonnegative and not out > 0:
            raise StudyFileError(f"{self.key(name)}: must be positive; got {value}")
        if nonnegative and out < 0:
            raise StudyFileError(f"{self.key(name)}: must not be negative; got {value}")
        return out

    def number(self, name: str, default: float | None = None, low: float | None = None,
               high: float | None = None, low_open: bool = False, integer: bool = False,
               example: str = "") -> float | None:
        """A plain number (money, fraction, hours per year, years)."""
        if name not in self.data:
            if default is None:
                raise StudyFileError(f"{self.key(name)}: required key is missing"
                                     + (f" (e.g. {name} = {example})" if example else ""))
            return default
        value = self.data[name]
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            hint = (" (write it without a unit: it is a plain number)"
                    if isinstance(value, str) else "")
            raise StudyFileError(f"{self.key(name)}: expected a number{hint}, got "
                                 f"{_kind_word(value)} {value!r}")
        v = float(value)
        if not math.isfinite(v):
            raise StudyFileError(f"{self.key(name)}: expected a finite number, got {value!r}")
        if integer and v != int(v):
            raise StudyFileError(f"{self.key(name)}: expected a whole number, got {value!r}")
        if low is not None and (v < low or (low_open and v == low)):
            rel = ">" if low_open else ">="
            raise StudyFileError(f"{self.key(name)}: must be {rel} {low:g}; got {value!r}")
        if high is not None and v > high:
            raise StudyFileError(f"{self.key(name)}: must be <= {high:g}; got {value!r}")
        return v

    def text(self, name: str, default: str | None = None,
             choices: tuple[str, ...] | None = None) -> str | None:
        if name not in self.data:
            if default is None and choices is not None:
                raise StudyFileError(f"{self.key(name)}: required key is missing (one of "
                                     f"{', '.join(choices)})")
            return default
        value = self.data[name]
        if not isinstance(value, str):
            raise StudyFileError(f"{self.key(name)}: expected text, got {_kind_word(value)}")
        if choices is not None and value not in choices:
            near = difflib.get_close_matches(value, choices, n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            raise StudyFileError(f"{self.key(name)}: must be one of {', '.join(choices)}; got "
                                 f"{value!r}{hint}")
        return value

    def table(self, name: str, allowed: tuple[str, ...], required: bool = False) -> Section | None:
        if name not in self.data:
            if required:
                raise StudyFileError(f"{self.key(name)}: required section [{self.key(name)}] is "
                                     f"missing")
            return None
        return Section(self.data[name], self.key(name), allowed)

    def tables(self, name: str, allowed: tuple[str, ...], required: bool = True) -> list[Section]:
        if name not in self.data:
            if required:
                raise StudyFileError(f"{self.key(name)}: required; add at least one "
                                     f"[[{self.key(name)}]] table")
            return []
        value = self.data[name]
        if not isinstance(value, list) or not value:
            raise StudyFileError(f"{self.key(name)}: expected one or more [[{self.key(name)}]] "
                                 f"tables, got {_kind_word(value)}")
        return [Section(v, f"{self.key(name)}[{i}]", allowed) for i, v in enumerate(value)]
