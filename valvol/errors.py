"""Every error valvol raises on purpose, and how a problem in the data is located.

A user never sees a traceback for bad data: the CLI maps `InputError` and
`ConfigError` to exit code 2 and prints each `Problem` on its own line.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import asdict, dataclass


@dataclass(frozen=True, order=True)
class Problem:
    """One located finding about the input.

    Every field but ``reason`` may be empty when it does not apply (a whole
    file, a whole series, an aggregate computed from several files).
    """

    file: str = ""
    row: int | None = None
    economy: str = ""
    item: str = ""
    period: str = ""
    price_basis: str = ""
    reason: str = ""

    def render(self) -> str:
        """One line: ``file:row economy/item/price_basis/period: reason``.

        Fields are shown printable and clipped (`clip`): a hostile or broken cell (a NUL
        byte, a 10 MB code) never floods the terminal or breaks the one-line form.
        """
        where = clip(self.file, 200) if self.file else "<accounts>"
        if self.row is not None:
            where += f":{self.row}"
        series = "/".join(clip(x, 40) for x in (self.economy, self.item, self.price_basis, self.period) if x)
        reason = clip(self.reason, 600)
        return f"{where} {series}: {reason}" if series else f"{where}: {reason}"

    def as_dict(self) -> dict[str, object]:
        return asdict(self)


def clip(text: str, limit: int = 60) -> str:
    """``text`` with unprintable characters escaped, cut to ``limit`` characters and its length shown.

    >>> clip("XQ\\x00")
    'XQ\\\\x00'
    >>> clip("P" + "A" * 99, 8)
    'PAAAAAAA... (100 characters)'
    """
    text = str(text)
    shown = text if text.isprintable() else "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)
    return shown if len(shown) <= limit else f"{shown[:limit]}... ({len(text)} characters)"


def found(text: object, limit: int = 60) -> str:
    """A cell as written, for a message: quoted, printable, clipped (``found 'abc'``)."""
    text = str(text)
    return repr(text) if len(text) <= limit else f"{text[:limit]!r}... ({len(text)} characters)"


class ValvolError(Exception):
    """Base of the errors valvol raises deliberately."""

    exit_code = 1


class ConfigError(ValvolError):
    """The configuration (``valvol.toml`` or options) is malformed."""

    exit_code = 2

    def __init__(self, message: str, *, file: str = "") -> None:
        self.file = file
        message = clip(message, 1000)  # a value quoted back may be huge or hold control characters
        super().__init__(f"{clip(file, 200)}: {message}" if file else message)


class InputError(ValvolError):
    """The accounts are invalid; carries every problem found, not just the first."""

    exit_code = 2

    def __init__(self, problems: Iterable[Problem], *, limit: int = 50) -> None:
        self.problems: list[Problem] = sorted(set(problems), key=_problem_key)
        self.limit = limit
        super().__init__(self.summary())

    def summary(self) -> str:
        n = len(self.problems)
        head = [p.render() for p in self.problems[: self.limit]]
        more = [f"... and {n - self.limit} more"] if n > self.limit else []
        return "\n".join([f"{n} problem(s) in the accounts:", *head, *more])


class OutputBusyError(ValvolError):
    """Another rebuild holds the output folder."""

    exit_code = 3


class PublishError(ValvolError):
    """The output folder holds something valvol must not overwrite."""

    exit_code = 1


def _problem_key(p: Problem) -> tuple:
    return (p.file, -1 if p.row is None else p.row, p.economy, p.item, p.price_basis, p.period, p.reason)
