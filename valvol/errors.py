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
        """One line: ``file:row economy/item/price_basis/period: reason``."""
        where = self.file or "<accounts>"
        if self.row is not None:
            where += f":{self.row}"
        series = "/".join(x for x in (self.economy, self.item, self.price_basis, self.period) if x)
        return f"{where} {series}: {self.reason}" if series else f"{where}: {self.reason}"

    def as_dict(self) -> dict[str, object]:
        return asdict(self)


class ValvolError(Exception):
    """Base of the errors valvol raises deliberately."""

    exit_code = 1


class ConfigError(ValvolError):
    """The configuration (``valvol.toml`` or options) is malformed."""

    exit_code = 2

    def __init__(self, message: str, *, file: str = "") -> None:
        self.file = file
        super().__init__(f"{file}: {message}" if file else message)


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
