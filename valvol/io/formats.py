"""Settings of the exchange formats read besides the long form: ``[sdmx]`` and ``[wide]`` of ``valvol.toml``.

Both sections are optional; their defaults read a standard SDMX-CSV file of national accounts
(dimensions of the SDMX global national-accounts structure) and a wide sheet whose header names
``economy``, ``item``, ``price_basis`` and the periods, with no mapping at all. `valvol.config`
builds them (`sdmx_config`, `wide_config`) into the one `Config`; unknown keys and values of the
wrong type are `ConfigError`s naming the file and the key.

Example::

    [sdmx]
    economy = "REF_AREA"                      # dimension giving the economy code
    item = ["STO", "REF_SECTOR"]              # dimensions joined by "_" into the item code
    totals = ["S1", "_Z", "_T", "_X", "N", "N11G"]  # codes of "total" or "not applicable": no suffix
    implied = ["COUNTERPART_AREA", "COUNTERPART_SECTOR", "ACCOUNTING_ENTRY"]
    unit_mult = "keep"                        # or a power of ten the values are scaled to, e.g. 6

    [sdmx.prices]                             # PRICES code, or "PRICES:UNIT_MEASURE", -> price basis
    V = "current"
    "L:IX" = "volume_index"

    [wide]
    sheets = ["Quarterly"]                    # .xlsx sheets to read (default: every sheet)
    header_row = 0                            # 1-based header row of a sheet; 0: found
    [wide.columns]                            # header text -> column, for sheets naming them otherwise
    Country = "economy"
"""

from __future__ import annotations

import re
from dataclasses import dataclass, fields
from typing import Any

from valvol.errors import ConfigError

#: A code of an SDMX code list or a dimension identifier (SDMX IDType: letters, digits, _ @ $ -).
SDMX_ID = re.compile(r"^[A-Za-z0-9_@$\-]+$")

#: Price bases of the input contract.
PRICE_BASES = ("current", "previous_year", "chain_linked", "volume_index", "price_index", "index")

#: PRICES codes of the SDMX national-accounts code list (CL_PRICES) and the price basis each means.
#: From memory: V current prices, Y previous-year prices, L chain-linked volumes, LR chain-linked
#: volumes rebased; with UNIT_MEASURE IX (index) the volume codes are a volume index, and D
#: (deflator) with IX a price index. ``_Z:IX`` (no price concept, an index) is a price index such
#: as a CPI (price basis ``index``).
DEFAULT_PRICES: dict[str, str] = {
    "V": "current",
    "Y": "previous_year",
    "L": "chain_linked",
    "LR": "chain_linked",
    "L:IX": "volume_index",
    "LR:IX": "volume_index",
    "D:IX": "price_index",
    "_Z:IX": "index",
}


@dataclass(frozen=True)
class SdmxConfig:
    """How the dimensions of an SDMX-CSV file become economy, item, price basis, adjustment and unit."""

    economy: str = "REF_AREA"
    item: tuple[str, ...] = ("STO", "REF_SECTOR")
    totals: tuple[str, ...] = ("S1", "_Z", "_T", "_X", "N", "N11G")
    implied: tuple[str, ...] = ("COUNTERPART_AREA", "COUNTERPART_SECTOR", "ACCOUNTING_ENTRY")
    prices_dimension: str = "PRICES"
    adjustment: str = "ADJUSTMENT"
    unit: str = "UNIT_MEASURE"
    #: "keep": values as given, the multiplier written into the unit text; an integer n: values
    #: scaled to units of 10^n (value x 10^(UNIT_MULT - n)).
    unit_mult: str | int = "keep"
    prices: tuple[tuple[str, str], ...] = tuple(DEFAULT_PRICES.items())

    @property
    def price_map(self) -> dict[str, str]:
        return dict(self.prices)


@dataclass(frozen=True)
class WideConfig:
    """How a wide sheet (one row per series, one column per period) is found."""

    sheets: tuple[str, ...] = ()
    header_row: int = 0
    columns: tuple[tuple[str, str], ...] = ()

    @property
    def renames(self) -> dict[str, str]:
        return {k.strip().lower(): v for k, v in self.columns}


def section_dict(obj: SdmxConfig | WideConfig) -> dict[str, Any]:
    """Plain data for the manifest (and so the fingerprint)."""
    out: dict[str, Any] = {}
    for f in fields(obj):
        value = getattr(obj, f.name)
        if f.name in ("prices", "columns"):
            value = dict(value)
        elif isinstance(value, tuple):
            value = list(value)
        out[f.name] = value
    return out


def _codes(value: Any, where: str, source: str, *, empty_ok: bool = True) -> tuple[str, ...]:
    if not isinstance(value, list) or not all(isinstance(v, str) and SDMX_ID.fullmatch(v) for v in value) \
            or (not value and not empty_ok):
        raise ConfigError(f"{where} must be a list of SDMX codes (letters, digits, _ @ $ -), got {value!r}",
                          file=source)
    return tuple(value)


def _code(value: Any, where: str, source: str) -> str:
    if not isinstance(value, str) or not (value == "" or SDMX_ID.fullmatch(value)):
        raise ConfigError(f"{where} must be an SDMX identifier such as \"REF_AREA\" (or \"\"), got {value!r}",
                          file=source)
    return value


def _unknown(raw: dict, cls: type, name: str, source: str) -> None:
    known = [f.name for f in fields(cls)]
    unknown = sorted(set(raw) - set(known))
    if unknown:
        raise ConfigError(f"unknown key(s) in [{name}]: {', '.join(unknown)}; allowed: {', '.join(known)}",
                          file=source)


def sdmx_config(raw: Any, source: str = "") -> SdmxConfig:
    """``[sdmx]`` of ``valvol.toml``; ``[sdmx.prices]`` entries are added to (or replace) the defaults."""
    if not isinstance(raw, dict):
        raise ConfigError("[sdmx] must be a table", file=source)
    _unknown(raw, SdmxConfig, "sdmx", source)
    values: dict[str, Any] = {}
    for key in ("economy", "prices_dimension", "adjustment", "unit"):
        if key in raw:
            values[key] = _code(raw[key], f"[sdmx] {key}", source)
    if "item" in raw:
        values["item"] = _codes(raw["item"], "[sdmx] item", source, empty_ok=False)
    for key in ("totals", "implied"):
        if key in raw:
            values[key] = _codes(raw[key], f"[sdmx] {key}", source)
    if "unit_mult" in raw:
        mult = raw["unit_mult"]
        if mult != "keep" and (isinstance(mult, bool) or not isinstance(mult, int) or not -15 <= mult <= 15):
            raise ConfigError(f"[sdmx] unit_mult must be \"keep\" or a power of ten between -15 and 15 (e.g. 6: "
                              f"values in millions), got {mult!r}", file=source)
        values["unit_mult"] = mult
    if "prices" in raw:
        table = raw["prices"]
        if not isinstance(table, dict):
            raise ConfigError("[sdmx.prices] must be a table of CODE = \"price basis\"", file=source)
        for code, basis in table.items():
            parts = code.split(":")
            if len(parts) > 2 or not all(SDMX_ID.fullmatch(p) for p in parts):
                raise ConfigError(f"[sdmx.prices] {code!r}: a PRICES code, or PRICES:UNIT_MEASURE (e.g. \"L:IX\")",
                                  file=source)
            if basis not in PRICE_BASES:
                raise ConfigError(f"[sdmx.prices] {code} must be one of {', '.join(PRICE_BASES)}, got {basis!r}",
                                  file=source)
        values["prices"] = tuple((DEFAULT_PRICES | table).items())
    config = SdmxConfig(**values)
    dims = [config.economy, *config.item, config.prices_dimension]
    if len(set(dims)) != len(dims) or "" in dims:
        raise ConfigError(f"[sdmx] economy, item and prices_dimension must name distinct dimensions, got {dims}",
                          file=source)
    return config


def wide_config(raw: Any, source: str = "") -> WideConfig:
    """``[wide]`` of ``valvol.toml``."""
    if not isinstance(raw, dict):
        raise ConfigError("[wide] must be a table", file=source)
    _unknown(raw, WideConfig, "wide", source)
    values: dict[str, Any] = {}
    if "sheets" in raw:
        sheets = raw["sheets"]
        if not isinstance(sheets, list) or not all(isinstance(s, str) and s.strip() for s in sheets):
            raise ConfigError(f"[wide] sheets must be a list of sheet names, got {sheets!r}", file=source)
        values["sheets"] = tuple(sheets)
    if "header_row" in raw:
        row = raw["header_row"]
        if isinstance(row, bool) or not isinstance(row, int) or not 0 <= row <= 1000:
            raise ConfigError(f"[wide] header_row must be a row number (1-1000; 0: found), got {row!r}", file=source)
        values["header_row"] = row
    if "columns" in raw:
        cols = raw["columns"]
        targets = ("economy", "item", "price_basis", "adjustment", "unit")
        if not isinstance(cols, dict) or not all(isinstance(v, str) and v in targets for v in cols.values()):
            raise ConfigError(f"[wide.columns] maps header text to one of {', '.join(targets)}, got {cols!r}",
                              file=source)
        values["columns"] = tuple(cols.items())
    return WideConfig(**values)

