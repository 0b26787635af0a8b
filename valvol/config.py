"""Typed settings for one accounts folder, read from its optional ``valvol.toml``.

The configuration is one frozen object built once and passed explicitly to
every function that needs it; nothing is read at import time. Unknown keys and
values of the wrong type are `ConfigError`s naming the file and the key.

Example ``valvol.toml``::

    reference_year = 2020          # volumes re-referenced so that C_2020 = CLV_2020
    levels_at_annual_rate = false  # false: year = sum of quarters; true: mean
    price_indexes = ["CPI"]        # items given as price indexes (price_basis "index")
    carry_columns = ["obs_status"] # extra input columns kept as text (others are dropped, with a warning)

    [aggregates]                   # aggregate = signed components
    B1GQ = ["P3", "P5", "P6", "-P7", "YA1"]
    P3 = ["P31_S14", "P3_S15", "P3_S13"]

    [checks]
    tolerance_abs = 0.5            # identity tolerance: max(abs, rel * sum |components|)
    tolerance_rel = 1e-4
    deflator_jump_pct = 5.0        # warn when a quarterly deflator moves more than this
    index_tolerance = 0.05         # rounding of given volume and price indexes (half a unit of the last decimal)

    [volumes]
    method = "annual_overlap"      # or "one_quarter_overlap", "over_the_year"
    index = "laspeyres"            # or "fisher" (data chained as Fisher indexes)
    benchmark_to_years = true      # other methods: quarters benchmarked to the annual chain (Denton)

    [contributions]
    convention = "annual_overlap_exact"        # or "prior_year_weights", "fisher"

    [price_gaps]
    numeraire = "trade_average"    # or "import", "export", "domestic_final_demand"

    [price_bridge]                 # CPI sub-indexes CPI_<COICOP> against P31_S14_<COICOP>
    headline = "CPI"
    accounts = "P31_S14"
    pairs = ["CPI_CP0451=P31_S14_CP045"]  # where the two classifications differ
"""

from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any

from valvol.errors import ConfigError
from valvol.hierarchy import DEFAULT_AGGREGATES, ITEM_CODE, Hierarchy
from valvol.io.formats import SdmxConfig, WideConfig, sdmx_config, wide_config
from valvol.io.formats import section_dict as format_section_dict
from valvol.io.text import NotUTF8, decode_utf8

CONFIG_FILE = "valvol.toml"
#: Form of a carried column name (headers are read in lower case).
CARRY_COLUMN = re.compile(r"^[a-z][a-z0-9_]*$")
#: Column names the reader and the parsed rows use themselves: never carried.
RESERVED_COLUMNS = frozenset({
    "economy", "period", "item", "price_basis", "value", "adjustment", "unit", "source_file", "source_row",
    "period_text", "value_text", "frequency", "year", "quarter", "month", "derived_from", "origin",
})


@dataclass(frozen=True)
class ChecksConfig:
    """Tolerances of the accounting checks (same unit as the accounts)."""

    tolerance_abs: float = 0.5
    tolerance_rel: float = 1e-4
    deflator_jump_pct: float = 5.0
    #: Half a unit of the last decimal of given volume and price indexes (0.05: one decimal).
    index_tolerance: float = 0.05


@dataclass(frozen=True)
class VolumesConfig:
    """How previous-year-price data are chained into volumes."""

    method: str = "annual_overlap"
    index: str = "laspeyres"
    benchmark_to_years: bool = True


@dataclass(frozen=True)
class ContributionsConfig:
    """Convention of contributions to growth."""

    convention: str = "annual_overlap_exact"


@dataclass(frozen=True)
class BenchmarkConfig:
    """Quarterly series benchmarked one by one to annual values (empty ``items``: none)."""

    items: tuple[str, ...] = ()
    price_bases: tuple[str, ...] = ("current",)
    method: str = "proportional_denton"
    year_from_quarters: str = ""
    on_nonpositive: str = "error"
    rho: float | None = None
    benchmarks: str = ""
    first_year: int = 0


@dataclass(frozen=True)
class ReconcileConfig:
    """Components adjusted jointly to their annual values and to the aggregate (empty ``aggregate``: none)."""

    aggregate: str = ""
    components: tuple[str, ...] = ()
    price_bases: tuple[str, ...] = ("current",)
    fixed: tuple[str, ...] = ()
    discrepancy: str = ""
    method: str = "proportional_denton"
    tolerance: float = 1e-6
    benchmarks: str = ""
    first_year: int = 0


@dataclass(frozen=True)
class PriceGapsConfig:
    """Numeraire of the trading gain."""

    numeraire: str = "trade_average"


@dataclass(frozen=True)
class PriceBridgeConfig:
    """The CPI-to-household-deflator bridge (`valvol.methods.price_bridge`).

    ``pairs``: ``"INDEX_ITEM=ACCOUNTS_ITEM"`` where the two classifications differ (for
    example ``"CPI_CP0451=P31_S14_CP045"``); other sub-indexes pair by their COICOP code.
    """

    headline: str = "CPI"
    accounts: str = "P31_S14"
    pairs: tuple[str, ...] = ()

    def pair_tuples(self) -> tuple[tuple[str, str], ...]:
        return tuple(tuple(p.split("=", 1)) for p in self.pairs)  # type: ignore[misc]


_CHOICES: dict[tuple[str, str], tuple[str, ...]] = {
    ("volumes", "method"): ("annual_overlap", "one_quarter_overlap", "over_the_year"),
    ("volumes", "index"): ("laspeyres", "fisher"),
    ("contributions", "convention"): ("annual_overlap_exact", "prior_year_weights", "fisher"),
    ("price_gaps", "numeraire"): ("trade_average", "import", "export", "domestic_final_demand"),
    ("benchmark", "method"): ("proportional_denton", "additive_denton", "chow_lin"),
    ("benchmark", "year_from_quarters"): ("", "total", "mean", "q4", "q1"),
    ("benchmark", "on_nonpositive"): ("error", "additive"),
    ("reconcile", "method"): ("proportional_denton", "wls"),
}


@dataclass(frozen=True)
class Config:
    """Everything that steers one rebuild of one accounts folder."""

    reference_year: int | None = None
    levels_at_annual_rate: bool = False
    hierarchy: Hierarchy = field(default_factory=Hierarchy.default)
    checks: ChecksConfig = field(default_factory=ChecksConfig)
    volumes: VolumesConfig = field(default_factory=VolumesConfig)
    contributions: ContributionsConfig = field(default_factory=ContributionsConfig)
    price_gaps: PriceGapsConfig = field(default_factory=PriceGapsConfig)
    price_bridge: PriceBridgeConfig = field(default_factory=PriceBridgeConfig)
    benchmark: BenchmarkConfig = field(default_factory=BenchmarkConfig)
    reconcile: ReconcileConfig = field(default_factory=ReconcileConfig)
    price_indexes: tuple[str, ...] = ("CPI",)
    carry_columns: tuple[str, ...] = ()
    #: exchange formats read besides the long form (valvol.io.formats)
    sdmx: SdmxConfig = field(default_factory=SdmxConfig)
    wide: WideConfig = field(default_factory=WideConfig)
    source: str = ""

    def as_dict(self) -> dict[str, Any]:
        """Plain data for the manifest (the hierarchy as signed code lists)."""
        return {
            "reference_year": self.reference_year,
            "levels_at_annual_rate": self.levels_at_annual_rate,
            "aggregates": {
                a: [("-" if c.sign < 0 else "") + c.item for c in comps]
                for a, comps in sorted(self.hierarchy.aggregates.items())
            },
            "sign_changing": sorted(self.hierarchy.sign_changing),
            "price_indexes": list(self.price_indexes),
            "carry_columns": list(self.carry_columns),
            "checks": _section_dict(self.checks),
            "volumes": _section_dict(self.volumes),
            "contributions": _section_dict(self.contributions),
            "price_gaps": _section_dict(self.price_gaps),
            "price_bridge": _section_dict(self.price_bridge),
            "benchmark": _section_dict(self.benchmark),
            "reconcile": _section_dict(self.reconcile),
            "sdmx": format_section_dict(self.sdmx),
            "wide": format_section_dict(self.wide),
            "source": self.source,
        }


_SECTIONS = {
    "checks": ChecksConfig,
    "volumes": VolumesConfig,
    "contributions": ContributionsConfig,
    "price_gaps": PriceGapsConfig,
    "price_bridge": PriceBridgeConfig,
    "benchmark": BenchmarkConfig,
    "reconcile": ReconcileConfig,
}
_TOP_KEYS = {"reference_year", "levels_at_annual_rate", "aggregates", "sign_changing", "price_indexes",
             "carry_columns", "sdmx", "wide", *_SECTIONS}


def _section_dict(obj: object) -> dict[str, Any]:
    out = {f.name: getattr(obj, f.name) for f in fields(obj)}  # type: ignore[arg-type]
    return {k: list(v) if isinstance(v, tuple) else v for k, v in out.items()}


def load_config(accounts_dir: str | Path) -> Config:
    """Read ``valvol.toml`` from ``accounts_dir`` (defaults when absent)."""
    path = Path(accounts_dir) / CONFIG_FILE
    if not path.exists():
        return Config()
    try:
        raw = tomllib.loads(decode_utf8(path.read_bytes()))
    except NotUTF8 as exc:
        raise ConfigError(exc.reason, file=str(path)) from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"not valid TOML: {exc}", file=str(path)) from None
    except OSError as exc:
        raise ConfigError(f"cannot be read: {exc.strerror or exc}", file=str(path)) from None
    return config_from_mapping(raw, source=str(path))


def config_from_mapping(raw: dict[str, Any], *, source: str = "") -> Config:
    """Build a `Config` from parsed TOML, checking every key and type."""
    unknown = sorted(set(raw) - _TOP_KEYS)
    if unknown:
        raise ConfigError(
            f"unknown key(s) {', '.join(unknown)}; allowed: {', '.join(sorted(_TOP_KEYS))}", file=source
        )
    ref = raw.get("reference_year")
    if ref is not None and (isinstance(ref, bool) or not isinstance(ref, int) or not 1000 <= ref <= 9999):
        raise ConfigError(f"reference_year must be a four-digit year, got {ref!r}", file=source)
    annual_rate = raw.get("levels_at_annual_rate", False)
    if not isinstance(annual_rate, bool):
        raise ConfigError(f"levels_at_annual_rate must be true or false, got {annual_rate!r}", file=source)
    aggregates = raw.get("aggregates", DEFAULT_AGGREGATES)
    if not isinstance(aggregates, dict):
        raise ConfigError("[aggregates] must be a table of code = [components]", file=source)
    for code, comps in aggregates.items():
        if not isinstance(comps, list):
            raise ConfigError(f"[aggregates] {code} must be a list of component codes, got {comps!r}", file=source)
    sign_changing = raw.get("sign_changing", [])
    if not isinstance(sign_changing, list) or not all(isinstance(s, str) and ITEM_CODE.fullmatch(s)
                                                       for s in sign_changing):
        raise ConfigError(f"sign_changing must be a list of item codes (e.g. [\"P52_PRIV\"]), got {sign_changing!r}",
                          file=source)
    indexes = raw.get("price_indexes", ["CPI"])
    if not isinstance(indexes, list) or not all(isinstance(s, str) and ITEM_CODE.fullmatch(s) for s in indexes):
        raise ConfigError("price_indexes must be a list of item codes", file=source)
    carry = _carry_columns(raw.get("carry_columns", []), source)
    try:
        hierarchy = Hierarchy.from_mapping(aggregates, sign_changing)
    except ConfigError as exc:
        raise ConfigError(str(exc), file=source) from None
    sections = {name: _section(raw.get(name, {}), cls, name, source) for name, cls in _SECTIONS.items()}
    _check_bridge(sections["price_bridge"], source)
    _check_adjustments(sections["benchmark"], sections["reconcile"], hierarchy, tuple(indexes), source)
    return Config(
        reference_year=ref,
        levels_at_annual_rate=annual_rate,
        hierarchy=hierarchy,
        price_indexes=tuple(indexes),
        carry_columns=carry,
        sdmx=sdmx_config(raw.get("sdmx", {}), source),
        wide=wide_config(raw.get("wide", {}), source),
        source=source,
        **sections,
    )


def _check_bridge(bridge: PriceBridgeConfig, source: str) -> None:
    """Codes of ``[price_bridge]``: item codes; each pair an index item and an accounts item of the bridge."""
    for key in ("headline", "accounts"):
        if not ITEM_CODE.fullmatch(getattr(bridge, key)):
            raise ConfigError(f"[price_bridge] {key} must be an item code, got {getattr(bridge, key)!r}", file=source)
    for p in bridge.pairs:
        a, _, b = p.partition("=")
        if not (a.startswith(bridge.headline + "_") and b.startswith(bridge.accounts + "_")
                and ITEM_CODE.fullmatch(a) and ITEM_CODE.fullmatch(b)):
            raise ConfigError(f"[price_bridge] pairs: {p!r} is not {bridge.headline}_<CODE>={bridge.accounts}_<CODE>",
                              file=source)


def _carry_columns(value: Any, source: str) -> tuple[str, ...]:
    """``carry_columns``: distinct lower-case column names, none of them a column valvol uses itself."""
    if not isinstance(value, list) or not all(isinstance(c, str) and CARRY_COLUMN.fullmatch(c) for c in value):
        raise ConfigError(f"carry_columns must be a list of lower-case column names (e.g. [\"obs_status\"]), "
                          f"got {value!r}", file=source)
    reserved = sorted(set(value) & RESERVED_COLUMNS)
    if reserved:
        raise ConfigError(f"carry_columns: {', '.join(reserved)} is a column valvol reads or adds itself",
                          file=source)
    if len(set(value)) != len(value):
        raise ConfigError(f"carry_columns lists a column twice: {value!r}", file=source)
    return tuple(value)


def _check_adjustments(b: BenchmarkConfig, r: ReconcileConfig, hierarchy: Hierarchy,
                       indexes: tuple[str, ...], source: str) -> None:
    """Codes and price bases of [benchmark] and [reconcile] must be ones valvol can adjust."""
    bases = ("current", "previous_year")
    codes = {"[benchmark] items": b.items, "[reconcile] components": tuple(c.lstrip("+-") for c in r.components),
             "[reconcile] fixed": r.fixed,
             "[reconcile] aggregate / discrepancy": tuple(c for c in (r.aggregate, r.discrepancy) if c)}
    for where, items in codes.items():
        unknown = sorted(i for i in set(items) if i in indexes or not hierarchy.is_allowed(i))
        if unknown:
            raise ConfigError(f"{where}: unknown item code(s) {', '.join(unknown)}", file=source)
    for where, chosen in (("[benchmark]", b.price_bases), ("[reconcile]", r.price_bases)):
        if set(chosen) - set(bases):
            raise ConfigError(f"{where} price_bases must be among {', '.join(bases)}, got {list(chosen)}", file=source)
    for where, name in (("[benchmark] benchmarks", b.benchmarks), ("[reconcile] benchmarks", r.benchmarks)):
        if name and (Path(name).is_absolute() or ".." in Path(name).parts or "\0" in name):
            raise ConfigError(f"{where} must be a path inside the accounts folder (relative, without '..'), "
                              f"got {name!r}", file=source)
    if b.benchmarks and r.benchmarks and b.benchmarks != r.benchmarks:
        raise ConfigError("[benchmark] and [reconcile] name different benchmarks files; use one", file=source)
    if r.aggregate and not r.components and r.aggregate not in hierarchy.aggregates:
        raise ConfigError(f"[reconcile] aggregate {r.aggregate} is not declared in [aggregates]; declare it or "
                          "list its components", file=source)


def _section(raw: Any, cls: type, name: str, source: str) -> Any:
    if not isinstance(raw, dict):
        raise ConfigError(f"[{name}] must be a table", file=source)
    known = {f.name: f for f in fields(cls)}
    unknown = sorted(set(raw) - set(known))
    if unknown:
        raise ConfigError(
            f"unknown key(s) in [{name}]: {', '.join(unknown)}; allowed: {', '.join(known)}", file=source
        )
    values = {}
    for key, value in raw.items():
        default = known[key].default
        if isinstance(default, bool):
            if not isinstance(value, bool):
                raise ConfigError(f"[{name}] {key} must be true or false, got {value!r}", file=source)
        elif isinstance(default, tuple):
            if not isinstance(value, list) or not all(isinstance(v, str) and v for v in value):
                raise ConfigError(f"[{name}] {key} must be a list of codes, got {value!r}", file=source)
            value = tuple(value)
        elif default is None:  # an optional number (e.g. a fixed Chow-Lin rho)
            if isinstance(value, bool) or not isinstance(value, int | float) or not -1 < value < 1:  # NaN fails
                raise ConfigError(f"[{name}] {key} must be a number between -1 and 1, got {value!r}", file=source)
            value = float(value)
        elif isinstance(default, int) and not isinstance(default, bool):  # a year; 0 = automatic
            if isinstance(value, bool) or not isinstance(value, int) or not (value == 0 or 1000 <= value <= 9999):
                raise ConfigError(f"[{name}] {key} must be a four-digit year, got {value!r}", file=source)
        elif isinstance(default, float):
            if isinstance(value, bool) or not isinstance(value, int | float) or not (0 <= value < math.inf):
                raise ConfigError(f"[{name}] {key} must be a finite non-negative number, got {value!r}",
                                  file=source)
            value = float(value)
        elif isinstance(default, str):
            choices = _CHOICES.get((name, key))
            if not isinstance(value, str) or (choices and value not in choices):
                raise ConfigError(
                    f"[{name}] {key} must be one of {', '.join(choices or ())}, got {value!r}", file=source
                )
        values[key] = value
    return cls(**values)
