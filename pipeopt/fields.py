"""Input sections (edge machinery): frozen dataclasses parsed once, with units at the door.

Every input a study takes (a line, the economics, a material choice, a duty profile, a tariff,
...) is a frozen dataclass derived from :class:`InputSection`. Each field declares what it holds
with a *spec* (:func:`quantity`, :func:`number`, :func:`whole`, :func:`text`, :func:`flag`,
:func:`quantities`, :func:`numbers`, :func:`texts`, :func:`section`), and the spec is the one
place where the field's rule lives:

- a dimensional field takes a string with units (``"3.2 km"``) or a :class:`pint.Quantity`, is
  converted to SI once, and refuses a bare number with a message that shows how to write it
  (the same message from Python and from a study file);
- a plain-number field refuses text and booleans, and checks its range;
- the message of every broken rule names the key path (``line.length``, ``duty[1].hours``,
  ``material[2].cost.exponent``), the rule and the value received.

Converted values are stored as :class:`SI` floats (a ``float`` that remembers it is already in
SI), so that :func:`dataclasses.replace` on a section works without converting twice. A study
file is read by :meth:`InputSection.read` from a :class:`~pipeopt.studyfile.Section`: the same
specs say which keys are allowed and which are required, so the reader and the Python
constructor cannot disagree.

Examples
--------
>>> from dataclasses import dataclass
>>> @dataclass(frozen=True)
... class Pipe(InputSection):
...     SECTION = "pipe"
...     length: float = quantity("length", low=0.0, low_open=True)
...     count: int = whole(1, 10, default=1)
>>> Pipe("2.5 km").length
2500.0
>>> Pipe(2500.0)  # doctest: +ELLIPSIS
Traceback (most recent call last):
...
pipeopt.errors.InputError: pipe.length: expected a length such as ..., got 2500.0 with no unit
"""

from __future__ import annotations

import contextlib
import contextvars
import dataclasses
import difflib
import math
from collections.abc import Iterator
from typing import Any, ClassVar

import numpy as np

from .errors import InputError

__all__ = ["SI", "InputSection", "to_quantity", "to_number", "quantity", "number", "whole", "text",
           "flag", "quantities", "numbers", "texts", "section", "key_path", "MISSING"]

MISSING = dataclasses.MISSING

#: Key path of the section being read (set by :meth:`InputSection.read` and by a caller that
#: builds a section for a study-file table, e.g. ``duty[1]``).
_PATH: contextvars.ContextVar[str | None] = contextvars.ContextVar("pipeopt_key_path",
                                                                   default=None)


class SI(float):
    """A float already converted to SI by pipeopt's parsing (a tag, nothing more).

    Dimensional fields of input sections hold these, so that rebuilding a section from its own
    values (``dataclasses.replace``) does not ask for units again. Arithmetic gives plain floats.
    """

    __slots__ = ()

    def __repr__(self) -> str:
        return float.__repr__(self)


@contextlib.contextmanager
def key_path(path: str) -> Iterator[None]:
    """Name the study-file table an input section is built from (for error messages).

    >>> from pipeopt.inputs import Line
    >>> with key_path("line[2]"):
    ...     Line("-1 km", "10 m")
    Traceback (most recent call last):
    ...
    pipeopt.errors.InputError: line[2].length: must be positive; got '-1 km'
    """
    token = _PATH.set(path)
    try:
        yield
    finally:
        _PATH.reset(token)


def _shown(value: Any) -> str:
    if isinstance(value, SI):
        return repr(float(value))
    return repr(value) if isinstance(value, str) else str(value)


def _is_number(value: Any) -> bool:
    return (isinstance(value, (int, float, np.integer, np.floating))
            and not isinstance(value, (bool, np.bool_)))


def _kind_word(value: Any) -> str:
    if isinstance(value, (bool, np.bool_)):
        return "true/false"
    if _is_number(value):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, (list, tuple)):
        return "a list"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__


@dataclasses.dataclass(frozen=True)
class _Spec:
    """What a field holds and the rule it obeys."""

    what: str                      # quantity, number, whole, text, flag, quantities, numbers,
    #                                texts, section
    kind: str | None = None        # units.KINDS key of a quantity
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    example: str = ""
    choices: tuple[str, ...] | None = None
    cls: Any = None                # the InputSection class of a nested section
    key: str | None = None         # the study-file key when it differs from the field name
    element: str | None = None     # the key of each element, e.g. "flow" for duty[k].flow
    unit: str = ""                 # unit of a plain number for reports ("1/yr", "h/yr",
    #                                "{currency}/kWh"; "-" for a pure number)

    # ----- conversion and rules ------------------------------------------------------------
    def range_rule(self, v: float, key: str, original: Any) -> None:
        if self.low is not None and (v < self.low or (self.low_open and v == self.low)):
            if self.low == 0 and self.low_open:
                words = "must be positive"
            elif self.low == 0:
                words = "must not be negative"
            else:
                words = f"must be {'>' if self.low_open else '>='} {self.low:g}"
            raise InputError(f"{key}: {words}; got {_shown(original)}")
        if self.high is not None and v > self.high:
            raise InputError(f"{key}: must be <= {self.high:g}; got {_shown(original)}")

    def quantity(self, value: Any, key: str) -> SI:
        from .units import KINDS, to_si

        if isinstance(value, SI):
            out = float(value)
        elif _is_number(value):
            k = KINDS[self.kind]
            raise InputError(f"{key}: expected {k.description} such as '{k.example}', got "
                             f"{value!r} with no unit")
        elif isinstance(value, (bool, dict, list, tuple, np.bool_)):
            k = KINDS[self.kind]
            raise InputError(f"{key}: expected {k.description} such as \"{k.example}\", got "
                             f"{_kind_word(value)}")
        else:
            out = to_si(value, self.kind, key)
            if not isinstance(out, float):
                raise InputError(f"{key}: expected a single value, got {value!s}")
        self.range_rule(out, key, value)
        return SI(out)

    def number(self, value: Any, key: str) -> float:
        if not _is_number(value):
            hint = (" (write it without a unit: it is a plain number)"
                    if isinstance(value, str) else "")
            raise InputError(f"{key}: expected a number{hint}, got {_kind_word(value)} "
                             f"{value!r}")
        try:
            v = float(value)
        except OverflowError:
            raise InputError(f"{key}: the number is too large; got {value!r}") from None
        if not math.isfinite(v):
            raise InputError(f"{key}: expected a finite number, got {value!r}")
        if self.what == "whole" and v != int(v):
            raise InputError(f"{key}: expected a whole number, got {value!r}")
        self.range_rule(v, key, value)
        return int(v) if self.what == "whole" else v

    def text(self, value: Any, key: str) -> str:
        if not isinstance(value, str):
            raise InputError(f"{key}: expected text, got {_kind_word(value)}")
        if self.choices is not None and value not in self.choices:
            near = difflib.get_close_matches(value, self.choices, n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            raise InputError(f"{key}: must be one of {', '.join(self.choices)}; got "
                             f"{value!r}{hint}")
        return value

    def convert(self, value: Any, key: str) -> Any:
        if self.what == "quantity":
            return self.quantity(value, key)
        if self.what in ("number", "whole"):
            return self.number(value, key)
        if self.what == "text":
            return self.text(value, key)
        if self.what == "flag":
            if not isinstance(value, (bool, np.bool_)):
                raise InputError(f"{key}: expected true or false, got {_kind_word(value)}")
            return bool(value)
        if self.what == "section":
            if isinstance(value, self.cls):
                return value
            raise InputError(f"{key}: expected a {self.cls.__name__}, got "
                             f"{_kind_word(value)}")
        # lists: one value per element, each with its own key
        if isinstance(value, (str, bytes, dict)) or not hasattr(value, "__iter__"):
            raise InputError(f"{key}: expected a list, got {_kind_word(value)}")
        items = list(value)
        single = _Spec({"quantities": "quantity", "numbers": "number",
                        "texts": "text"}[self.what], self.kind, self.low, self.high,
                       self.low_open, self.example, self.choices)
        out = []
        for i, item in enumerate(items):
            k = (f"{key.rsplit('.', 1)[0]}[{i}].{self.element}" if self.element
                 else f"{key}[{i}]")
            out.append(single.convert(item, k))
        return tuple(out)


def to_quantity(value: Any, kind: str, key: str, low: float | None = None,
                low_open: bool = False) -> SI:
    """Convert one dimensional value with the rules of a :func:`quantity` field.

    For a field that takes either a quantity or a word (e.g. ``aging = "typical"``).
    """
    return _Spec("quantity", kind, low, None, low_open).convert(value, key)


def to_number(value: Any, key: str, low: float | None = None, high: float | None = None,
              low_open: bool = False) -> float:
    """Convert one plain number with the rules of a :func:`number` field.

    For a field that takes either a number or a list of numbers (e.g. a budget by year).

    >>> to_number(2.5e6, "programme.budget", low=0.0)
    2500000.0
    >>> to_number("lots", "programme.budget[1]", low=0.0)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    pipeopt.errors.InputError: programme.budget[1]: expected a number (...), got text 'lots'
    """
    return _Spec("number", None, low, high, low_open).convert(value, key)


def _field(spec: _Spec, default: Any, factory: Any = MISSING) -> Any:
    if factory is not MISSING:
        return dataclasses.field(default_factory=factory, metadata={"spec": spec})
    return dataclasses.field(default=default, metadata={"spec": spec})


def quantity(kind: str, *, low: float | None = None, high: float | None = None,
             low_open: bool = False, default: Any = MISSING, key: str | None = None) -> Any:
    """A dimensional value of ``kind`` (:data:`pipeopt.units.KINDS`), stored in SI."""
    return _field(_Spec("quantity", kind, low, high, low_open, key=key), default)


def number(low: float | None = None, high: float | None = None, *, low_open: bool = False,
           default: Any = MISSING, example: str = "", key: str | None = None,
           unit: str = "-") -> Any:
    """A plain number (money, a fraction, hours per year, years), within [low, high].

    ``unit`` says what the number counts, for reports (``"1/yr"``, ``"h/yr"``,
    ``"{currency}/kWh"``; ``"-"`` for a pure number); it is not parsed.
    """
    return _field(_Spec("number", None, low, high, low_open, example, key=key, unit=unit),
                  default)


def whole(low: float | None = None, high: float | None = None, *, default: Any = MISSING,
          example: str = "", key: str | None = None, unit: str = "-") -> Any:
    """A whole number within [low, high] (``unit`` as for :func:`number`)."""
    return _field(_Spec("whole", None, low, high, False, example, key=key, unit=unit),
                  default)


def text(choices: tuple[str, ...] | None = None, *, default: Any = MISSING,
         key: str | None = None) -> Any:
    """Text, optionally one of ``choices``."""
    return _field(_Spec("text", choices=choices, key=key), default)


def flag(*, default: Any = MISSING, key: str | None = None) -> Any:
    """True or false."""
    return _field(_Spec("flag", key=key), default)


def quantities(kind: str, *, low: float | None = None, high: float | None = None,
               low_open: bool = False, default: Any = MISSING, element: str | None = None,
               key: str | None = None) -> Any:
    """A list of dimensional values of ``kind``, stored as a tuple of SI floats."""
    return _field(_Spec("quantities", kind, low, high, low_open, element=element, key=key),
                  default)


def numbers(low: float | None = None, high: float | None = None, *, low_open: bool = False,
            default: Any = MISSING, element: str | None = None, key: str | None = None,
            unit: str = "-") -> Any:
    """A list of plain numbers, stored as a tuple (``unit`` as for :func:`number`)."""
    return _field(_Spec("numbers", None, low, high, low_open, element=element, key=key,
                        unit=unit), default)


def texts(choices: tuple[str, ...] | None = None, *, default: Any = MISSING,
          element: str | None = None, key: str | None = None) -> Any:
    """A list of text values, stored as a tuple."""
    return _field(_Spec("texts", choices=choices, element=element, key=key), default)


def section(cls: Any, *, default: Any = MISSING, key: str | None = None) -> Any:
    """A nested input section of class ``cls`` (a table in a study file)."""
    return _field(_Spec("section", cls=cls, key=key), default)


class InputSection:
    """Base of the frozen input dataclasses: converts and checks every field once, on entry.

    A subclass is a ``@dataclass(frozen=True)`` whose fields are declared with the spec
    functions of this module, sets ``SECTION`` (its study-file table, e.g. ``"line"``) and may
    add rules between fields in :meth:`_check` (which receives the key path).
    """

    SECTION: ClassVar[str] = ""

    def __post_init__(self) -> None:
        path = _PATH.get() or self.SECTION
        for f in dataclasses.fields(self):
            spec = f.metadata.get("spec")
            if spec is None:
                continue
            value = getattr(self, f.name)
            if value is None and f.default is None:
                continue
            name = spec.key or f.name
            # a key with a dot is a path from the top of the study file (a field that the
            # file keeps in another table, e.g. growth.flow_per_year of a duty profile)
            key = name if "." in name or not path else f"{path}.{name}"
            object.__setattr__(self, f.name, spec.convert(value, key))
        self._check(path)

    def _check(self, path: str) -> None:
        """Rules between fields (override); ``path`` is the key path of the section."""

    @classmethod
    def from_si(cls, **values: Any):
        """Build the section from values already in SI (dimensional fields as plain floats).

        For code that computed SI values itself; the rules are checked all the same.
        """
        specs = {f.name: f.metadata.get("spec") for f in dataclasses.fields(cls)}
        tagged = {}
        for name, value in values.items():
            spec = specs.get(name)
            if spec is not None and spec.what == "quantity" and _is_number(value):
                value = SI(value)
            elif (spec is not None and spec.what == "quantities" and value is not None
                  and not isinstance(value, (str, dict))):
                value = tuple(SI(v) if _is_number(v) else v for v in value)
            tagged[name] = value
        return cls(**tagged)

    @classmethod
    def keys(cls) -> tuple[str, ...]:
        """The study-file keys of this section."""
        return tuple((f.metadata["spec"].key or f.name) for f in dataclasses.fields(cls)
                     if "spec" in f.metadata)

    @classmethod
    def read(cls, sec: Any, **given: Any):
        """Build the section from a study-file table (:class:`~pipeopt.studyfile.Section`).

        ``sec`` may be None (the table is absent: every field takes its default). Values in
        ``given`` are passed as they are (fields the caller reads itself, e.g. a nested table
        of several possible kinds). A missing required key names the key and, for a quantity,
        how to write it.
        """
        from .units import KINDS

        kwargs: dict[str, Any] = dict(given)
        path = sec.path if sec is not None else cls.SECTION
        for f in dataclasses.fields(cls):
            spec = f.metadata.get("spec")
            if spec is None or f.name in kwargs:
                continue
            key = spec.key or f.name
            present = sec is not None and sec.has(key)
            if not present:
                if f.default is MISSING and f.default_factory is MISSING:
                    where = f"{path}.{key}" if path else key
                    hint = ""
                    if spec.what == "quantity":
                        example = KINDS[spec.kind].example
                        hint = f" (write it with a unit, e.g. {key} = \"{example}\")"
                    elif spec.example:
                        hint = f" (e.g. {key} = {spec.example})"
                    elif spec.choices:
                        hint = f" (one of {', '.join(spec.choices)})"
                    raise InputError(f"{where}: required key is missing{hint}")
                continue
            raw = sec.raw(key)
            if spec.what == "section":
                from .studyfile import Section

                raw = spec.cls.read(Section(raw, f"{path}.{key}", spec.cls.keys()))
            kwargs[f.name] = raw
        with key_path(path):
            return cls(**kwargs)
