"""Command-line options derived from the orderings' settings records.

Every setting declared with a ``flag`` (e.g. ``nd``'s ``effort`` → ``--effort``) becomes one option
of the commands that order (``order``, ``stats``); its help, value names and the methods it applies
to come from the records. Any other setting is reached by ``--set NAME=VALUE``. A flag or ``--set``
given to a method that does not take it is a user error (exit 2, one line).
"""

from __future__ import annotations

import functools
import inspect
from dataclasses import dataclass
from typing import List, Optional

import typer

from ..errors import InputError

__all__ = ["SET_HELP", "with_setting_flags", "setting_options", "method_settings"]

SET_HELP = ("Any setting of the method as NAME=VALUE (repeatable); `reorder methods --settings` lists them. "
            "Booleans: true/false; lists: comma-separated; none for the method's preset.")

_TYPES = {"bool": bool, "int": int, "float": float, "str": str}


@dataclass(frozen=True)
class _Flag:
    flag: str
    setting: str
    kind: str
    metavar: str
    help: str
    methods: tuple


def _flags() -> list[_Flag]:
    """The flags declared by the registered methods, in order of first appearance."""
    from ..orderings import available, declared_options

    seen: dict[str, dict] = {}
    for m in available():
        for f in declared_options(m):
            if not f.flag:
                continue
            d = seen.setdefault(f.flag, {"field": f, "methods": [], "defaults": {}})
            if d["field"].name != f.name or d["field"].kind != f.kind:
                raise TypeError(f"flag {f.flag} means different settings in different methods")
            d["methods"].append(m)
            if not d["defaults"] and len(f.help) > len(d["field"].help):
                d["field"] = f  # no default to point at: the fullest help
            if f.default is not None:
                d["defaults"][m] = f.default
                d["field"] = f  # the help of the method that owns the default reads best
    out = []
    for flag, d in seen.items():
        f = d["field"]
        where = ", ".join(d["methods"])
        defaults = d["defaults"]
        if len(set(map(str, defaults.values()))) == 1:
            default = f"; default {next(iter(defaults.values()))}"
        else:
            default = "".join(f"; {m}: default {v}" for m, v in defaults.items())
        help_ = f"{f.help[0].upper()}{f.help[1:]} (for {where}{default})."
        out.append(_Flag(flag, f.name, f.kind, f.metavar if f.kind != "bool" else "", help_, tuple(d["methods"])))
    return out


def _param(fl: _Flag) -> inspect.Parameter:
    dest = "flag_" + fl.setting
    if fl.kind == "bool":
        default = typer.Option(None, f"{fl.flag}/--no-{fl.flag[2:]}", help=fl.help)
    else:
        default = typer.Option(None, fl.flag, help=fl.help, metavar=fl.metavar)
    return inspect.Parameter(dest, inspect.Parameter.KEYWORD_ONLY, default=default,
                             annotation=Optional[_TYPES.get(fl.kind, str)])


def with_setting_flags(cmd):
    """Decorator adding one option per declared settings flag and ``--set`` to a command; the
    command receives them as ``flags`` (``{setting: value}``, unset ones None) and ``sets``."""
    sig = inspect.signature(cmd)
    base = [p for p in sig.parameters.values() if p.name not in ("flags", "sets")]
    fls = _flags()
    extra = [_param(fl) for fl in fls]
    extra.append(inspect.Parameter("sets", inspect.Parameter.KEYWORD_ONLY, annotation=List[str],
                                   default=typer.Option([], "--set", help=SET_HELP, metavar="NAME=VALUE")))

    @functools.wraps(cmd)
    def wrapper(*args, **kwargs):
        flags = {k[5:]: kwargs.pop(k) for k in list(kwargs) if k.startswith("flag_")}
        return cmd(*args, flags=flags, sets=list(kwargs.pop("sets", []) or []), **kwargs)

    wrapper.__signature__ = sig.replace(parameters=base + extra)
    wrapper.__annotations__ = {k: v for k, v in cmd.__annotations__.items() if k not in ("flags", "sets")}
    wrapper.setting_flags = {fl.setting: fl for fl in fls}
    return wrapper


def setting_options(cmd, method: str, flags: dict, sets: list) -> dict:
    """The settings of ``method`` given by the flags and ``--set`` items of a command, checked
    against the method's record (InputError for a flag or name the method does not take)."""
    from ..orderings import declared_options, parse_method

    name = str(method).split(":", 1)[0]
    own = {f.name for f in declared_options(name)}
    opts = {}
    for setting, value in flags.items():
        if value is None:
            continue
        fl = cmd.setting_flags[setting]
        if setting not in own:
            raise InputError(f"{fl.flag} applies to {', '.join(fl.methods)}, not '{name}'")
        opts[setting] = value
    for item in sets:
        key, eq, _ = item.partition("=")
        if not eq or not key.strip():
            raise InputError(f"--set takes NAME=VALUE, not '{item}'")
        _, parsed = parse_method(f"{name}:{item}")
        opts.update(parsed)
    return opts


def method_settings(method: str, opts: dict):
    """``(label, settings record)`` of a method (or method spec) with options: validation before
    any file is read."""
    from ..orderings import resolve

    entry, record = resolve(method, opts)
    return entry, record


def flag_help(setting: str) -> str:
    """The help text of the flag of ``setting`` (for commands that take one flag by hand)."""
    return next(fl.help for fl in _flags() if fl.setting == setting)


def flag_options(method: str, **values) -> dict:
    """``{setting: value}`` of the given flag values (None: not given), checked to apply to
    ``method`` (InputError naming the methods that take the flag otherwise)."""
    from ..orderings import declared_options

    name = str(method).split(":", 1)[0]
    own = {f.name for f in declared_options(name)}
    flags = {fl.setting: fl for fl in _flags()}
    out = {}
    for setting, value in values.items():
        if value is None:
            continue
        if setting not in own:
            fl = flags[setting]
            raise InputError(f"{fl.flag} applies to {', '.join(fl.methods)}, not '{name}'")
        out[setting] = value
    return out
