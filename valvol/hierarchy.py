"""Signed aggregation hierarchies of expenditure items.

An aggregate is declared as a list of signed components, for example
``B1GQ = ["P3", "P5", "P6", "-P7", "YA1"]``: GDP is household, NPISH and
government consumption plus gross capital formation plus exports, less
imports, plus the statistical discrepancy (SNA 2008, ch. 16 expenditure
approach; codes as in the SDMX national-accounts code lists).

An item code is a transaction code with optional breakdown suffixes joined by
``_`` (``P52_PRIV``, ``P52_S11``, ``P53_PUB``, ``B11_GOODS``, ``D2X3_S13``): such
a code is accepted wherever its transaction is, and it may be negative exactly
when its transaction may (the longest sign-changing code it extends at a ``_``
boundary), so a sector split of inventories behaves as inventories do.

Notes
-----
Aggregates are formed at current prices and at previous-year prices, never
by summing chain-linked components (ESA 95 para. 10.65).
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from graphlib import CycleError, TopologicalSorter

from valvol.errors import ConfigError

#: Form of an item code: SNA transaction codes as used in SDMX code lists.
ITEM_CODE = re.compile(r"^[A-Z][A-Z0-9]*(?:_[A-Z0-9]+)*$")

#: Default SNA 2008 expenditure hierarchy (common practice; SDMX codes).
DEFAULT_AGGREGATES: dict[str, list[str]] = {
    "P3": ["P31_S14", "P3_S15", "P3_S13"],
    "P5": ["P51G", "P52", "P53"],
    "B1GQ": ["P3", "P5", "P6", "-P7", "YA1"],
}

#: SNA 2008 / SDMX transaction codes valvol knows without declaration.
KNOWN_ITEMS: frozenset[str] = frozenset(
    {
        "B1GQ", "B11", "P3", "P31", "P31_S14", "P31_S15", "P31_S14_S15", "P3_S14",
        "P3_S15", "P3_S14_S15", "P3_S13", "P31_S13", "P32_S13", "P5", "P51G", "P51G_BI",
        "P52", "P53", "P52_P53", "P6", "P61", "P62", "P7", "P71", "P72", "YA1",
        "P3_P5", "P3_P5_P6", "D1", "B2A3G", "D2X3", "D21X31",
    }
)

#: Transactions that change sign or pass near zero (changes in inventories, valuables,
#: external balance, statistical discrepancy, net taxes): no non-negativity rule, no own
#: growth rate and no own deflator, for them and for every breakdown of them.
DEFAULT_SIGN_CHANGING: frozenset[str] = frozenset({"P52", "P53", "P52_P53", "B11", "YA1", "D2X3"})


def extended_code(item: str, codes: Iterable[str]) -> str | None:
    """The longest of ``codes`` that ``item`` equals or extends at a ``_`` boundary, else None.

    >>> extended_code("P52_PRIV", {"P52", "P52_P53", "P5"})
    'P52'
    >>> extended_code("P52_P53_S11", {"P52", "P52_P53"})
    'P52_P53'
    >>> extended_code("P51G", {"P5"}) is None
    True
    """
    codes = set(codes)
    parts = item.split("_")
    for n in range(len(parts), 0, -1):
        head = "_".join(parts[:n])
        if head in codes:
            return head
    return None


@dataclass(frozen=True)
class Component:
    """One signed component of an aggregate (sign is +1 or -1)."""

    item: str
    sign: int


@dataclass(frozen=True)
class Hierarchy:
    """Signed aggregates and the sign-changing items.

    Parameters
    ----------
    aggregates
        Mapping of aggregate code to its signed components.
    sign_changing
        Items that may be negative and get no own growth rate or deflator.
    """

    aggregates: Mapping[str, tuple[Component, ...]]
    sign_changing: frozenset[str] = field(default=DEFAULT_SIGN_CHANGING)

    @classmethod
    def from_mapping(
        cls, spec: Mapping[str, Iterable[str]], sign_changing: Iterable[str] = ()
    ) -> Hierarchy:
        """Build from ``{"B1GQ": ["P3", "-P7", ...]}``; raise ConfigError if malformed."""
        aggs: dict[str, tuple[Component, ...]] = {}
        for agg, comps in spec.items():
            if not isinstance(agg, str) or not ITEM_CODE.fullmatch(agg):
                raise ConfigError(f"aggregate code {agg!r} is not of the form of an SNA code")
            if isinstance(comps, str) or not isinstance(comps, Iterable):
                raise ConfigError(f"aggregate {agg}: components must be a list of codes")
            parsed = []
            for raw in comps:
                if not isinstance(raw, str):
                    raise ConfigError(f"aggregate {agg}: component {raw!r} is not a string")
                sign = -1 if raw.startswith("-") else 1
                code = raw.lstrip("+-")
                if not ITEM_CODE.fullmatch(code):
                    raise ConfigError(f"aggregate {agg}: component {raw!r} is not of the form of an SNA code")
                if code == agg:
                    raise ConfigError(f"aggregate {agg} lists itself as a component")
                parsed.append(Component(code, sign))
            if not parsed:
                raise ConfigError(f"aggregate {agg} has no components")
            if len({c.item for c in parsed}) != len(parsed):
                raise ConfigError(f"aggregate {agg} lists a component twice")
            aggs[agg] = tuple(parsed)
        h = cls(aggs, frozenset(DEFAULT_SIGN_CHANGING | set(sign_changing)))
        h.order()  # raises on cycles
        return h

    @classmethod
    def default(cls) -> Hierarchy:
        """The default SNA expenditure hierarchy (`DEFAULT_AGGREGATES`)."""
        return cls.from_mapping(DEFAULT_AGGREGATES)

    def order(self) -> list[str]:
        """Aggregates in bottom-up order (components before the aggregates using them)."""
        graph = {a: {c.item for c in comps if c.item in self.aggregates} for a, comps in self.aggregates.items()}
        try:
            return list(TopologicalSorter(graph).static_order())
        except CycleError as exc:
            raise ConfigError(f"aggregates form a cycle: {' -> '.join(exc.args[1])}") from None

    @property
    def items(self) -> frozenset[str]:
        """Every code the hierarchy declares (aggregates and components)."""
        out = set(self.aggregates)
        for comps in self.aggregates.values():
            out.update(c.item for c in comps)
        return frozenset(out)

    def allowed_items(self) -> frozenset[str]:
        """Transaction codes accepted in input: the known SNA codes plus declared ones.

        Breakdowns of these codes (`is_allowed`) are accepted too.
        """
        return KNOWN_ITEMS | self.items

    def is_allowed(self, item: str) -> bool:
        """True for a known or declared code, or a breakdown of one (``P52_PRIV``, ``P3_S13_X``)."""
        return extended_code(item, self.allowed_items()) is not None

    def sign_changing_transaction(self, item: str) -> str | None:
        """The sign-changing transaction ``item`` is or breaks down (``P52`` for ``P52_PRIV``), else None."""
        return extended_code(item, self.sign_changing)

    def anchor(self, item: str) -> str | None:
        """The code of the hierarchy that ``item`` is or breaks down (longest match), else None."""
        return extended_code(item, self.items)

    def edges(self) -> list[tuple[str, str, int]]:
        """``(aggregate, component, sign)`` rows, in a stable order, for SQL joins."""
        return [(a, c.item, c.sign) for a in sorted(self.aggregates) for c in self.aggregates[a]]

    def is_sign_changing(self, item: str) -> bool:
        """True for items without own growth rate or deflator: sign-changing transactions, their
        breakdowns (``P52_PRIV`` as ``P52``) and the non-additivity residuals."""
        return item.endswith("_RESIDUAL") or self.sign_changing_transaction(item) is not None

    def sign_changing_among(self, items: Iterable[str]) -> list[str]:
        """The sign-changing codes among ``items`` (each distinct code tested once), sorted."""
        return sorted(i for i in set(items) if self.is_sign_changing(i))
