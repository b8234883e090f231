"""Reading study files (edge layer): TOML text to checked Python values, with key paths.

Every error names the key path (``line.length``, ``material[2].cost.exponent``), the rule and
what was found, and raises :class:`StudyFileError` (an :class:`~pipeopt.errors.InputError`, so a
``ValueError``). Unknown keys are refused with the nearest valid key suggested.

Reading is bounded: a file of at most :data:`MAX_FILE_BYTES`, tables and arrays nested at most
:data:`MAX_DEPTH` levels, integers within TOML's 64 bits, plain numbers of at most
:data:`MAX_NUMBER` in magnitude unless the key allows more, texts of at most :data:`MAX_TEXT`
characters. A UTF-8 byte-order mark is accepted; the path ``-`` reads standard input. Messages
quote the study file's values (shortened), never the contents of another file.
"""

from __future__ import annotations

import difflib
import math
import re
import sys
import tomllib
from pathlib import Path
from typing import Any

from .errors import InputError
from .units import KINDS, to_si

__all__ = ["StudyFileError", "Section", "read_toml", "read_study", "StudyFileMixin",
           "FrozenStudy", "MAX_FILE_BYTES", "MAX_DEPTH", "MAX_NUMBER", "MAX_TEXT"]

#: Largest study file read [bytes] (a study file is a few kB).
MAX_FILE_BYTES = 16 * 2**20
#: Deepest nesting of tables and arrays in a study file.
MAX_DEPTH = 16
#: Largest magnitude of a plain number unless its key allows more.
MAX_NUMBER = 1e12
#: Longest text value [characters].
MAX_TEXT = 1000
_INT64 = 2**63 - 1  # TOML v1.0.0, "Integer": 64-bit signed integers; beyond them, an error


class StudyFileError(InputError):
    """A study file broke a rule; the message starts with the key path."""


def _shown(value: Any, width: int = 60) -> str:
    """``repr`` of a value for a message, shortened; a huge integer by its size only."""
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 200:
        return f"an integer of about {int(value.bit_length() * 0.30103) + 1} digits"
    text = repr(value)
    return text if len(text) <= width else text[:width - 3] + "..."


def _visible_key(key: Any) -> str:
    """A key for a message: shortened, control characters shown as escapes."""
    text = str(key) if len(str(key)) <= 40 else str(key)[:37] + "..."
    return text if text.isprintable() else repr(text)


def _key_path(parts: tuple) -> str:
    out = ""
    for k in parts:
        if isinstance(k, int):
            out += f"[{k}]"
        else:
            k = _visible_key(k)
            out += f".{k}" if out else k
    return out


def _check_tree(data: dict, name: str) -> None:
    """Refuse nesting deeper than MAX_DEPTH and integers beyond 64 bits, naming the key."""
    stack: list[tuple[tuple, Any, int]] = [((), data, 0)]
    while stack:
        path, value, depth = stack.pop()
        if depth > MAX_DEPTH:
            raise StudyFileError(f"{_key_path(path)}: tables and arrays nested deeper than "
                                 f"{MAX_DEPTH} levels")
        if isinstance(value, dict):
            stack.extend((path + (k,), v, depth + 1) for k, v in value.items())
        elif isinstance(value, list):
            stack.extend((path + (i,), v, depth + 1) for i, v in enumerate(value))
        elif isinstance(value, int) and not isinstance(value, bool) and \
                not -_INT64 - 1 <= value <= _INT64:
            raise StudyFileError(f"{_key_path(path)}: integers are 64-bit in TOML (-2^63 to "
                                 f"2^63 - 1); got {_shown(value)}")


_TOML_TOKEN = re.compile(r'"""(?:\\.|[^\\])*?"""|\'\'\'.*?\'\'\'|"(?:\\.|[^"\\\n])*"|\'[^\'\n]*\''
                         r"|#[^\n]*|[\[\]{}=\n]", re.S)


def _deep_key(text: str) -> str:
    """Where arrays or inline tables first nest deeper than MAX_DEPTH: 'line N, key K'."""
    depth, line, start, table, key = 0, 1, 0, "", ""
    for m in _TOML_TOKEN.finditer(text):
        tok = m.group()
        if tok == "\n" or tok[0] in "\"'":
            line += tok.count("\n")
            if tok == "\n" and depth == 0:
                start = m.end()
        elif tok == "=" and depth == 0:
            key = text[start:m.start()].strip()
        elif tok in "[{":
            if tok == "[" and depth == 0 and not text[start:m.start()].strip():
                end = text.find("\n", m.end())
                table, key = text[m.end():end if end >= 0 else None].strip("[] \r"), ""
                continue
            depth += 1
            if depth > MAX_DEPTH:
                where = ".".join(k for k in (table, key) if k)[:80]
                return f"line {line}" + (f", key {where}" if where else "")
        elif tok in "]}" and depth:
            depth -= 1
    return ""


def _read_bytes(path: str | Path) -> tuple[bytes, str]:
    """The bytes of a study file (``-``: standard input), at most MAX_FILE_BYTES, and its name."""
    if str(path) == "-":
        name, data = "standard input", sys.stdin.buffer.read(MAX_FILE_BYTES + 1)
    else:
        p = Path(path)
        name = str(p)
        try:
            with open(p, "rb") as fh:
                data = fh.read(MAX_FILE_BYTES + 1)
        except FileNotFoundError:
            raise StudyFileError(f"study file {name!r} not found") from None
        except OSError as exc:
            raise StudyFileError(f"study file {name!r} cannot be read: {exc.strerror}") \
                from None
    if len(data) > MAX_FILE_BYTES:
        raise StudyFileError(f"study file {name!r} is larger than {MAX_FILE_BYTES // 2**20} MB; "
                             f"a study file is a few kB of TOML")
    return data, name


def read_toml(path: str | Path) -> dict[str, Any]:
    """Parse a TOML study file; a syntax error names the line and column.

    ``path`` ``"-"`` reads the file from standard input. A UTF-8 byte-order mark is accepted.

    Raises
    ------
    StudyFileError
        For a missing, unreadable or too large file, TOML syntax errors, nesting deeper than
        :data:`MAX_DEPTH` or integers beyond 64 bits.
    """
    data, name = _read_bytes(path)
    short = "standard input" if str(path) == "-" else Path(path).name
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise StudyFileError(f"study file {name!r} is not UTF-8 text (byte {exc.start})") \
            from None
    try:
        mapping = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyFileError(f"{short}: TOML syntax error: {exc}") from None
    except RecursionError:
        where = _deep_key(text)
        raise StudyFileError(f"{short}: {where + ': ' if where else ''}arrays or inline tables "
                             f"nested deeper than {MAX_DEPTH} levels") from None
    except ValueError:  # an integer longer than Python converts (thousands of digits)
        raise StudyFileError(f"{short}: a number with thousands of digits; integers are 64-bit "
                             f"in TOML") from None
    _check_tree(mapping, short)
    return mapping


def read_study(path: str | Path) -> tuple[dict[str, Any], Path, list[Path]]:
    """Read a study file: its mapping, the folder its relative paths refer to, its input files.

    Parameters
    ----------
    path : path or ``"-"``
        The study file; ``"-"`` reads standard input (relative paths then refer to the current
        folder).

    Returns
    -------
    mapping : dict
        The parsed file (see :func:`read_toml`).
    base : Path
        The folder relative paths in the file refer to.
    inputs : list of Path
        The files the study reads: the study file itself (not standard input) and every file
        its ``[catalog]`` section names.
    """
    mapping = read_toml(path)
    stdin = str(path) == "-"
    base = Path.cwd() if stdin else Path(path).parent
    inputs = [] if stdin else [Path(path)]
    cat = mapping.get("catalog")
    if isinstance(cat, dict):
        inputs += [base / v for v in cat.values() if isinstance(v, str) and v]
    return mapping, base, inputs


class FrozenStudy:
    """A study that does not change once built, and the labels every study has.

    The class's ``__init__`` keeps its arguments in ``self._args`` and sets ``self._frozen``
    last; from then on an attribute cannot be set, and :meth:`replace` builds a new study from
    the same arguments with some changed. ``name``, ``currency`` and ``illustrative`` come from
    the study's ``info`` (a :class:`pipeopt.inputs.StudyInfo`).
    """

    #: What else a user can do instead of changing the study, in the refusal's words.
    _OTHERWISE = ""

    def __setattr__(self, name: str, value: Any) -> None:
        if getattr(self, "_frozen", False):
            cls = type(self).__name__
            article = "an" if cls[0] in "AEIOU" else "a"
            raise AttributeError(f"{article} {cls} cannot be changed after it is built "
                                 f"({name}); use study.replace({name}=...){self._OTHERWISE}")
        object.__setattr__(self, name, value)

    def replace(self, **changes: Any):
        """A new study with some constructor arguments changed, e.g.
        ``study.replace(economics=Economics(0.03, 40, 80))``."""
        import inspect

        cls = type(self)
        known = set(inspect.signature(cls.__init__).parameters) - {"self"}
        unknown = set(changes) - known
        if unknown:
            raise InputError(f"replace: unknown argument {sorted(unknown)[0]!r}; arguments: "
                             f"{', '.join(sorted(known))}")
        return cls(**{**self._args, **changes})

    @property
    def name(self) -> str:
        """The study's name ([study] name)."""
        return self.info.name

    @property
    def currency(self) -> str:
        """The currency of its money ([study] currency; may be empty)."""
        return self.info.currency

    @property
    def illustrative(self) -> bool:
        """True when its numbers are invented to illustrate ([study] illustrative)."""
        return self.info.illustrative


class StudyFileMixin:
    """``from_toml``, ``from_dict`` and ``demo`` for a study class with a ``_from_dict``.

    The class defines ``_from_dict(mapping, base)`` (``base``: the folder relative paths in the
    file refer to) and ``_DEMO_FILE`` (a file in ``pipeopt/data``).
    """

    _DEMO_FILE = ""

    @classmethod
    def from_toml(cls, path: str | Path):
        """Read a study file; relative paths in it refer to its own folder.

        ``path`` ``"-"`` reads the study from standard input (relative paths then refer to the
        current folder).
        """
        mapping, base, _ = read_study(path)
        return cls.from_dict(mapping, base_dir=base)

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
                near = difflib.get_close_matches(str(k)[:100], self.allowed, n=1, cutoff=0.5)
                hint = f"; did you mean {self.key(near[0])!r}?" if near else ""
                valid = ", ".join(self.allowed)
                raise StudyFileError(f"{self.key(_visible_key(k))}: unknown key{hint} (valid "
                                     f"keys in {self.path or 'the file'}: {valid})")

    # ----- typed readers --------------------------------------------------------------------
    def raw(self, name: str, default: Any = None) -> Any:
        return self.data.get(name, default)

    def required(self, name: str) -> Any:
        if name not in self.data:
            raise StudyFileError(f"{self.key(name)}: required key is missing")
        return self.data[name]

    def quantity(self, name: str, kind: str, default: Any = None, required: bool = True,
                 positive: bool = True, nonnegative: bool = False,
                 limit: float = MAX_NUMBER) -> float | None:
        """A dimensional value written with its unit, e.g. ``"3.2 km"``, returned in SI.

        ``limit`` bounds the magnitude in SI (default :data:`MAX_NUMBER`).
        """
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
        if isinstance(value, int) and abs(value) > limit:
            raise StudyFileError(f"{self.key(name)}: expected {KINDS[kind].description} such as "
                                 f"\"{KINDS[kind].example}\", got {_shown(value)} with no unit")
        try:
            out = to_si(value, kind, self.key(name), limit)
        except InputError as exc:
            raise StudyFileError(str(exc)) from None
        if not isinstance(out, float):
            raise StudyFileError(f"{self.key(name)}: expected a single value")
        if positive and not nonnegative and not out > 0:
            raise StudyFileError(f"{self.key(name)}: must be positive; got {_shown(value)}")
        if nonnegative and out < 0:
            raise StudyFileError(f"{self.key(name)}: must not be negative; got {_shown(value)}")
        return out

    def number(self, name: str, default: float | None = None, low: float | None = None,
               high: float | None = None, low_open: bool = False, integer: bool = False,
               example: str = "", limit: float = MAX_NUMBER) -> float | None:
        """A plain number (money, fraction, hours per year, years).

        A magnitude above ``limit`` (default :data:`MAX_NUMBER`) is refused: pass a larger
        ``limit`` for a key that allows more.
        """
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
                                 f"{_kind_word(value)} {_shown(value)}")
        if isinstance(value, int) and abs(value) > limit:
            raise StudyFileError(f"{self.key(name)}: must be at most {limit:g} in magnitude; "
                                 f"got {_shown(value)}")
        v = float(value)
        if not math.isfinite(v):
            raise StudyFileError(f"{self.key(name)}: expected a finite number, got {value!r}")
        if abs(v) > limit:
            raise StudyFileError(f"{self.key(name)}: must be at most {limit:g} in magnitude; "
                                 f"got {value!r}")
        if integer and v != int(v):
            raise StudyFileError(f"{self.key(name)}: expected a whole number, got {value!r}")
        if low is not None and (v < low or (low_open and v == low)):
            rel = ">" if low_open else ">="
            raise StudyFileError(f"{self.key(name)}: must be {rel} {low:g}; got {value!r}")
        if high is not None and v > high:
            raise StudyFileError(f"{self.key(name)}: must be <= {high:g}; got {value!r}")
        return v

    def text(self, name: str, default: str | None = None,
             choices: tuple[str, ...] | None = None, max_length: int = MAX_TEXT) -> str | None:
        """A text value, at most ``max_length`` characters, one of ``choices`` when given."""
        if name not in self.data:
            if default is None and choices is not None:
                raise StudyFileError(f"{self.key(name)}: required key is missing (one of "
                                     f"{', '.join(choices)})")
            return default
        value = self.data[name]
        if not isinstance(value, str):
            raise StudyFileError(f"{self.key(name)}: expected text, got {_kind_word(value)}")
        if len(value) > max_length:
            raise StudyFileError(f"{self.key(name)}: at most {max_length} characters; got a "
                                 f"text of {len(value)}")
        if choices is not None and value not in choices:
            near = difflib.get_close_matches(value[:100], choices, n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            raise StudyFileError(f"{self.key(name)}: must be one of {', '.join(choices)}; got "
                                 f"{_shown(value)}{hint}")
        return value

    def table(self, name: str, allowed: tuple[str, ...], required: bool = False) -> Section | None:
        if name not in self.data:
            if required:
                raise self._missing_table(name)
            return None
        return Section(self.data[name], self.key(name), allowed)

    def tables(self, name: str, allowed: tuple[str, ...], required: bool = True) -> list[Section]:
        if name not in self.data:
            if required:
                raise self._missing_tables(name)
            return []
        value = self.data[name]
        if not isinstance(value, list) or not value:
            raise StudyFileError(f"{self.key(name)}: expected one or more [[{self.key(name)}]] "
                                 f"tables, got {_kind_word(value)}")
        return [Section(v, f"{self.key(name)}[{i}]", allowed) for i, v in enumerate(value)]

    def require_present(self, tables: tuple[str, ...] = (), arrays: tuple[str, ...] = ()) -> None:
        """Refuse a missing required ``[table]`` or ``[[array]]`` before any value is read (with
        the messages of :meth:`table` and :meth:`tables`), so that a file without one is
        answered before a value's units are parsed."""
        for name in tables:
            if name not in self.data:
                raise self._missing_table(name)
        for name in arrays:
            if name not in self.data:
                raise self._missing_tables(name)

    def _missing_table(self, name: str) -> StudyFileError:
        return StudyFileError(f"{self.key(name)}: required section [{self.key(name)}] is "
                              f"missing")

    def _missing_tables(self, name: str) -> StudyFileError:
        return StudyFileError(f"{self.key(name)}: required; add at least one "
                              f"[[{self.key(name)}]] table")
