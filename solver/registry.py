"""Name -> integer-code registries for the pieces kernels switch on.

Boundary conditions, interface fluxes, correction functions and time schemes
are each one :class:`Registry`.  Adding one is one ``register`` call; kernels
see only the integer code and a float parameter array, and a wrong name gets an
error listing every valid one.
"""
from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from typing import Any, Callable

__all__ = ["Entry", "Registry", "UnknownNameError", "closest"]


class UnknownNameError(KeyError):
    """A name is not in a registry; the message lists the valid names."""

    def __str__(self) -> str:  # KeyError quotes its message; we want plain text
        return str(self.args[0])


def closest(name: str, valid) -> str:
    """A ``did you mean`` hint for ``name`` among ``valid`` ('' if none is close)."""
    m = difflib.get_close_matches(str(name), list(valid), n=1, cutoff=0.5)
    return f" (did you mean '{m[0]}'?)" if m else ""


@dataclass(frozen=True)
class Entry:
    """One registered item.

    Attributes
    ----------
    name : str
        User-facing name (case files, CLI).
    code : int
        Integer the numba kernels branch on.
    doc : str
        One line for listings and error messages.
    params : tuple of str
        Names of the float parameters, in kernel order.
    defaults : dict
        Default parameter values (missing ones are required).
    obj : Any
        Optional Python object (a class, a coefficient set, a function).
    """

    name: str
    code: int
    doc: str = ""
    params: tuple[str, ...] = ()
    defaults: dict = field(default_factory=dict)
    obj: Any = None


class Registry:
    """An ordered set of named :class:`Entry` objects of one kind."""

    def __init__(self, kind: str):
        self.kind = kind
        self._entries: dict[str, Entry] = {}

    def register(self, name: str, code: int | None = None, doc: str = "", params=(), defaults=None,
                 obj: Any = None) -> Entry:
        if name in self._entries:
            raise ValueError(f"{self.kind} '{name}' is registered twice")
        code = len(self._entries) if code is None else int(code)
        if any(e.code == code for e in self._entries.values()):
            raise ValueError(f"{self.kind} code {code} is taken")
        entry = Entry(name, code, doc, tuple(params), dict(defaults or {}), obj)
        self._entries[name] = entry
        return entry

    def decorate(self, name: str, **kw) -> Callable:
        """Decorator form of :meth:`register` storing the decorated object."""
        def wrap(obj):
            self.register(name, obj=obj, **kw)
            return obj
        return wrap

    def names(self) -> list[str]:
        return list(self._entries)

    def __contains__(self, name) -> bool:
        return name in self._entries

    def __iter__(self):
        return iter(self._entries.values())

    def __getitem__(self, name: str) -> Entry:
        try:
            return self._entries[name]
        except KeyError:
            raise UnknownNameError(
                f"unknown {self.kind} '{name}'{closest(name, self._entries)}; valid: {', '.join(self._entries)}"
            ) from None

    def by_code(self, code: int) -> Entry:
        for e in self._entries.values():
            if e.code == code:
                return e
        raise UnknownNameError(f"no {self.kind} has code {code}")

    def param_array(self, name: str, given: dict | None, where: str = "") -> "list[float]":
        """Parameters of ``name`` in kernel order, from ``given`` and the defaults.

        Raises ``ValueError`` naming ``where`` on an unknown or missing parameter.
        """
        e = self[name]
        given = dict(given or {})
        unknown = [k for k in given if k not in e.params]
        loc = f"{where}: " if where else ""
        if unknown:
            k = unknown[0]
            valid = ", ".join(e.params) or "none"
            raise ValueError(f"{loc}{self.kind} '{name}' has no parameter '{k}'{closest(k, e.params)}; "
                             f"its parameters: {valid}")
        out = []
        for p in e.params:
            if p in given:
                v = given[p]
            elif p in e.defaults:
                v = e.defaults[p]
            else:
                raise ValueError(f"{loc}{self.kind} '{name}' needs parameter '{p}'")
            try:
                out.append(float(v))
            except (TypeError, ValueError):
                raise ValueError(f"{loc}{self.kind} '{name}' parameter '{p}' must be a number, got {v!r}") from None
        return out
