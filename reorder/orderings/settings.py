"""Settings records: how an ordering declares its options, and the one place they are checked.

Every registered ordering declares its settings as one frozen dataclass whose fields are made with
:func:`setting` (default, one line of help, allowed values, optional command-line flag). The
registry builds the record from the user's keywords with :func:`build`, which is the only
validation gate: an unknown name, a value of the wrong type or one outside the allowed values
raises :class:`~reorder.errors.InputError` naming the valid options and the closest match.

The command line and ``compare`` read the same records: :func:`declared` lists the fields with
their help, :func:`parse_value` turns the text of ``NAME=VALUE`` into the field's type.

Example::

    @dataclass(frozen=True)
    class MineSettings:
        depth: int = setting(3, "how deep to look", minimum=1)
        style: str = setting("plain", "how to break ties", choices=("plain", "random"))
"""

from __future__ import annotations

import dataclasses
import difflib
import typing
from dataclasses import dataclass

from ..errors import InputError

__all__ = ["setting", "Field", "declared", "build", "parse_value", "NoSettings", "closest"]


def setting(default, help: str, *, choices=None, minimum=None, flag: str | None = None,
            metavar: str | None = None, items=None):
    """A dataclass field carrying the metadata of one setting.

    Parameters
    ----------
    default
        Default value (None usually means "from the method's presets").
    help : str
        One line shown by the command line and in error messages.
    choices : sequence, optional
        Allowed values (for sequences: allowed items, see ``items``).
    minimum : number, optional
        Smallest allowed value of a number.
    flag : str, optional
        Name of a dedicated command-line option (e.g. ``"--effort"``); others are reached through
        the generic ``--set NAME=VALUE``.
    metavar : str, optional
        What the command line shows for the value (default: from the type or the choices).
    items : sequence, optional
        Allowed items of a tuple-valued setting.
    """
    meta = {"help": help, "choices": tuple(choices) if choices is not None else None, "minimum": minimum,
            "flag": flag, "metavar": metavar, "items": tuple(items) if items is not None else None}
    if isinstance(default, (list, dict, set)):
        raise TypeError("settings defaults must be immutable (use a tuple)")
    return dataclasses.field(default=default, metadata=meta)


@dataclass(frozen=True)
class Field:
    """One declared setting, as the command line and the error messages see it."""

    name: str
    kind: str  # "bool", "int", "float", "str", "tuple", "bool|str"
    optional: bool
    default: object
    help: str
    choices: tuple | None
    minimum: object
    flag: str | None
    metavar: str
    items: tuple | None


@dataclass(frozen=True)
class NoSettings:
    """Settings of an ordering that takes none."""


_KINDS = {"bool": bool, "int": int, "float": float, "str": str}


def _kind_of(hint) -> tuple[str, bool]:
    """(kind, optional) of a resolved type hint."""
    args = typing.get_args(hint)
    optional = type(None) in args
    if args and typing.get_origin(hint) is not tuple:
        rest = [a for a in args if a is not type(None)]
        if len(rest) == 1:
            return _kind_of(rest[0])[0], optional
        names = sorted(_kind_of(a)[0] for a in rest)
        return "|".join(names), optional
    if typing.get_origin(hint) is tuple or hint is tuple:
        return "tuple", optional
    for name, t in _KINDS.items():
        if hint is t:
            return name, optional
    raise TypeError(f"unsupported settings type {hint!r}")


_CACHE: dict[type, tuple[Field, ...]] = {}


def declared(cls) -> tuple[Field, ...]:
    """The settings declared by a settings dataclass, in declaration order."""
    if cls not in _CACHE:
        hints = typing.get_type_hints(cls)
        out = []
        for f in dataclasses.fields(cls):
            kind, optional = _kind_of(hints[f.name])
            meta = f.metadata
            choices = meta.get("choices")
            metavar = meta.get("metavar") or ("|".join(map(str, choices)) if choices else kind.upper())
            out.append(Field(f.name, kind, optional, f.default, meta.get("help", ""), choices,
                             meta.get("minimum"), meta.get("flag"), metavar, meta.get("items")))
        _CACHE[cls] = tuple(out)
    return _CACHE[cls]


def closest(name: str, names) -> str:
    """`` (did you mean X?)`` for the closest of ``names`` to ``name``, or an empty string."""
    match = difflib.get_close_matches(name, list(names), n=1, cutoff=0.6)
    return f" (did you mean {match[0]}?)" if match else ""


def _coerce(method: str, f: Field, value):
    """``value`` checked against the field; numbers widen int → float, tuples from str/list."""
    where = f"{method}: option {f.name}"
    if value is None:
        if f.optional:
            return None
        raise InputError(f"{where} takes a value, not None")
    kinds = f.kind.split("|")
    if isinstance(value, bool) or (hasattr(value, "dtype") and value.dtype == bool):
        ok = "bool" in kinds
        value = bool(value)
    elif "tuple" in kinds:
        if isinstance(value, str):
            value = tuple(v.strip() for v in value.replace("+", ",").split(",") if v.strip())
        if not isinstance(value, (tuple, list)) or not all(isinstance(v, str) for v in value):
            raise InputError(f"{where} takes names, not {value!r}")
        value = tuple(value)
        if f.items is not None:
            for v in value:
                if v not in f.items:
                    raise InputError(f"{where}: unknown item '{v}' (allowed: {', '.join(f.items)}){closest(v, f.items)}")
        return value
    elif isinstance(value, str):
        ok = "str" in kinds
    elif "int" in kinds and isinstance(value, int) or (hasattr(value, "dtype") and value.dtype.kind in "iu"
                                                        and "int" in kinds):
        ok, value = True, int(value)
    elif "float" in kinds and isinstance(value, (int, float)) or (hasattr(value, "dtype") and value.dtype.kind in "iuf"
                                                                   and "float" in kinds):
        ok, value = True, float(value)
    else:
        ok = False
    if not ok:
        raise InputError(f"{where} takes {f.kind.replace('|', ' or ')}, not {value!r}")
    if f.choices is not None and value not in f.choices:
        hint = closest(value, [c for c in f.choices if isinstance(c, str)]) if isinstance(value, str) else ""
        raise InputError(f"{where} must be one of {', '.join(map(str, f.choices))}, not {value!r}{hint}")
    if f.minimum is not None and not isinstance(value, (str, bool)) and value < f.minimum:
        raise InputError(f"{where} must be at least {f.minimum}, not {value!r}")
    return value


def build(method: str, cls, options: dict):
    """The settings record of ``method`` from the user's keywords: the one validation gate.

    Raises
    ------
    InputError
        For a name ``cls`` does not declare (with the valid names and the closest match), a value
        of the wrong type, outside the allowed values or below the minimum.
    """
    fields = {f.name: f for f in declared(cls)}
    values = {}
    for name, value in options.items():
        if name not in fields:
            valid = ", ".join(fields) if fields else "none"
            raise InputError(f"{method} takes no option '{name}'{closest(name, fields)}; its options: {valid}")
        values[name] = _coerce(method, fields[name], value)
    return cls(**values)


_TRUE = ("true", "yes", "on", "1")
_FALSE = ("false", "no", "off", "0")


def parse_value(method: str, cls, name: str, text: str):
    """The value of setting ``name`` of ``method`` from command-line text (``none`` for None;
    ``true``/``false``, ``yes``/``no``, ``on``/``off`` for booleans; comma-separated names for
    tuples, or joined by ``+`` inside a method spec of a comma-separated list). Raises InputError for unknown names and unreadable values."""
    fields = {f.name: f for f in declared(cls)}
    if name not in fields:
        valid = ", ".join(fields) if fields else "none"
        raise InputError(f"{method} takes no option '{name}'{closest(name, fields)}; its options: {valid}")
    f = fields[name]
    t = text.strip()
    if f.optional and t.lower() == "none":
        return None
    kinds = f.kind.split("|")
    if "bool" in kinds and t.lower() in _TRUE + _FALSE:
        return t.lower() in _TRUE
    if "int" in kinds:
        try:
            return int(t)
        except ValueError:
            pass
    if "float" in kinds:
        try:
            return float(t)
        except ValueError:
            pass
    if "str" in kinds or "tuple" in kinds:
        return t
    raise InputError(f"{method}: option {name} takes {f.kind.replace('|', ' or ')}, not '{t}'")
