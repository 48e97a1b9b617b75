"""User-facing input errors.

A user's mistake is reported as one line naming the field, the value and what
is allowed; the command line turns these into exit status 2 without a
traceback. ``InputErrors`` carries several problems found in one pass so a whole
input file can be reported at once.
"""

from __future__ import annotations


class InputError(ValueError):
    """A bad input value: ``field``, the offending ``value`` and what is ``allowed``."""

    def __init__(self, field: str, value, allowed: str, where: str | None = None):
        self.field = field
        self.value = value
        self.allowed = allowed
        self.where = where
        super().__init__(self.line())

    def line(self) -> str:
        place = f"{self.where}: " if self.where else ""
        shown = f"'{self.value}'" if isinstance(self.value, str) else f"{self.value}"
        return f"{place}{self.field}: {shown} is not allowed; expected {self.allowed}"


class InputErrors(ValueError):
    """Several input errors found in one validation pass."""

    def __init__(self, errors):
        self.errors = list(errors)
        super().__init__("\n".join(e.line() for e in self.errors))

    def lines(self):
        return [e.line() for e in self.errors]


class Collector:
    """Gather ``InputError`` s during validation and raise them all at the end.

    Examples
    --------
    >>> c = Collector()
    >>> with c.check():
    ...     raise InputError("diameter", "-1 m", "a length > 0")
    >>> len(c.errors)
    1
    """

    def __init__(self):
        self.errors: list[InputError] = []

    def add(self, error: InputError):
        self.errors.append(error)

    def check(self):
        return _Catch(self)

    def raise_if_any(self):
        if len(self.errors) == 1:
            raise self.errors[0]
        if self.errors:
            raise InputErrors(self.errors)


class _Catch:
    def __init__(self, collector):
        self.collector = collector

    def __enter__(self):
        return self

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None:
            return False
        if issubclass(exc_type, InputErrors):
            self.collector.errors.extend(exc.errors)
            return True
        if issubclass(exc_type, InputError):
            self.collector.add(exc)
            return True
        return False


class Warnings:
    """Problems that do not stop a run but change what its numbers mean.

    A vent left out of a total, a class with no sampled patch, draws dropped:
    nothing may be excluded silently, so each is recorded here under its key
    path, printed, listed in the report's warnings section and stored in
    ``summary.json`` (``as_list()``). Adding the same (key, message) twice
    records it once.

    Examples
    --------
    >>> w = Warnings()
    >>> w.add("vent[2]", "no exit temperature: not in the field's water total")
    >>> w.as_list()
    [{'key': 'vent[2]', 'message': "no exit temperature: not in the field's water total"}]
    >>> w.lines()
    ["vent[2]: no exit temperature: not in the field's water total"]
    """

    def __init__(self):
        self._items: list[tuple[str, str]] = []

    def add(self, key: str, message: str) -> None:
        item = (str(key), str(message))
        if item not in self._items:
            self._items.append(item)

    def extend(self, other: Warnings) -> None:
        for key, message in other._items:
            self.add(key, message)

    def as_list(self) -> list[dict]:
        """The warnings as JSON-ready dictionaries ``{"key": ..., "message": ...}``, in the order added."""
        return [{"key": k, "message": m} for k, m in self._items]

    def lines(self) -> list[str]:
        """One line per warning, ``key: message``, as printed."""
        return [f"{k}: {m}" if k else m for k, m in self._items]

    def __len__(self):
        return len(self._items)

    def __bool__(self):
        return bool(self._items)

    def __iter__(self):
        return iter(self.as_list())
