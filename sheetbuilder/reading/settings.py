"""Settings: every value has an embedded default; settings.toml in the input folder overrides.

Each setting is declared once in SETTINGS (key, default, kind, bounds, one-line help).
The Settings sheet, the defined names the formulas use and the TOML reader all come
from that one list, so adding a setting is one entry.
"""
from __future__ import annotations

import datetime as dt
import difflib
import errno
import os
import re
import stat
import tomllib
from dataclasses import dataclass, field, fields
from pathlib import Path
from types import MappingProxyType
from typing import Any

from sheetbuilder.reading.contract import TABLE_BY_NAME
from sheetbuilder.reading.periods import DATED_TABLES
from sheetbuilder.errors import Problem
from sheetbuilder.reading.guard import text_problem

SETTINGS_FILE = "settings.toml"


@dataclass(frozen=True)
class SettingSpec:
    """One setting: its key (also the workbook's defined name), default, kind and help.

    kind is one of 'percent', 'number', 'money', 'int', 'date', 'text', 'bool', 'choice' (one of choices).
    live settings are cells the formulas read; the others are used while reading
    the exports and are shown on the Settings sheet for the record.
    """

    key: str
    label: str
    default: Any
    kind: str
    help: str
    low: float | None = None
    high: float | None = None
    live: bool = True
    choices: tuple[str, ...] = ()


SETTINGS: tuple[SettingSpec, ...] = (
    SettingSpec("thin_margin", "Thin-margin threshold", 0.08, "percent",
                "A product whose net margin after ads is below this is 'thin' (common practice: 8%).",
                -1.0, 1.0),
    SettingSpec("strong_margin", "Strong-margin threshold", 0.20, "percent",
                "A product whose net margin after ads is at or above this is 'strong' (common practice: 20%).",
                -1.0, 1.0),
    SettingSpec("default_target_acos", "Default target ACoS", 0.30, "percent",
                "Target ACoS for products whose catalog row gives none.", 0.0, 5.0),
    SettingSpec("cap_target_at_break_even", "Cap target ACoS at break-even", "yes", "choice",
                "While Aim bids at profit is no: yes: bids aim at the lower of a product's target ACoS and its "
                "break-even ACoS (above break-even, each ad-driven sale loses money before any other cost); no: at "
                "the target as given.",
                choices=("yes", "no")),
    SettingSpec("seek_profit", "Aim bids at profit", "yes", "choice",
                "yes: each product's bids aim at the lowest of its target ACoS, its break-even ACoS and the ACoS that "
                "earns the most profit after ads (break-even x e / (1 + e), e the click elasticity below); no: at the "
                "target (a seller who wants growth, more sales at less profit, says no).",
                choices=("yes", "no")),
    SettingSpec("click_elasticity", "Click elasticity (e)", 0.6, "number",
                "How clicks answer a bid: a bid 10% higher brings about e x 10% more clicks (clicks grow as bid^e). "
                "Used by the profit-seeking aim; lower e aims lower.", 0.05, 3.0),
    SettingSpec("period_days", "Period length (days)", 30, "int",
                "How many days the exports cover.", 1, 3660),
    SettingSpec("period_end", "Period end date", None, "date",
                "Last day the exports cover; blank if unknown.", None, None),
    SettingSpec("attribution_days", "Attribution window (days)", 7, "int",
                "Days after a click in which the ad platform still credits a sale to it.", 0, 90),
    SettingSpec("prior_clicks", "Smoothing weight (clicks)", 20, "int",
                "A target's conversion rate is shrunk toward its product's, as if it had this many more clicks "
                "at the product's rate (Beta prior).", 0, 10000),
    SettingSpec("min_clicks", "Minimum clicks", 10, "int",
                "Follow-up: a change whose keyword had fewer clicks than this before or after it is 'too few clicks' "
                "to judge (Bids holds no keyword for lack of clicks: its history decides).", 0, 100000),
    SettingSpec("zero_order_confidence", "Zero-order confidence", 0.90, "percent",
                "How sure zero orders must be unlikely at the product's conversion rate before a bid is cut "
                "for having no orders.", 0.5, 0.999),
    SettingSpec("waste_confidence", "Waste confidence", 0.90, "percent",
                "How sure the keyword history must make it that a click is worth less than it costs at the target "
                "before a bid is cut to its value bid at once, past the maximum cut.", 0.5, 0.999),
    SettingSpec("exploration_orders", "Exploration allowance (orders)", 1.0, "number",
                "A keyword with no orders yet is not cut while its history spend is below this many orders' "
                "worth of target cost (allowance x target ACoS x order value).", 0.0, 100.0),
    SettingSpec("max_bid_cut", "Maximum bid cut", 0.50, "percent",
                "The most a bid is lowered in one run.", 0.0, 0.95),
    SettingSpec("max_bid_raise", "Maximum bid raise", 1.00, "percent",
                "The most a bid is raised in one run.", 0.0, 5.0),
    SettingSpec("bid_floor", "Bid floor", 0.10, "money",
                "No proposed bid goes below this.", 0.0, 1000.0),
    SettingSpec("bid_ceiling", "Bid ceiling", 5.00, "money",
                "No proposed bid goes above this.", 0.01, 10000.0),
    SettingSpec("min_promote_orders", "Orders to promote a term", 1, "int",
                "A search term with at least this many orders, not yet an exact keyword, is proposed for promotion.",
                1, 100000),
    SettingSpec("block_spend_multiple", "Block after spend of price x", 1.0, "number",
                "A term with no orders that has spent this many times its product's price is proposed as a negative "
                "(common practice: 1.0).", 0.0, 100.0),
    SettingSpec("harvest_match_type", "Match type for promoted terms", "exact", "choice",
                "The match type a promoted search term is added with.", choices=("exact", "phrase")),
    SettingSpec("starting_bid", "Starting bid of a promoted term", "lower", "choice",
                "lower: the lower of the term's CPC and its value bid; cpc: its CPC; value: its value bid.",
                choices=("lower", "cpc", "value")),
    SettingSpec("source_negative", "Negate promoted terms at the source", "yes", "choice",
                "yes: also propose a negative exact in the source ad group (broad, phrase and auto sources), so "
                "the new keyword does not compete with the one the term came from.", choices=("yes", "no")),
    SettingSpec("negative_level", "Level of new negatives", "ad group", "choice",
                "Add new negatives to the term's ad group, or to its whole campaign.",
                choices=("ad group", "campaign")),
    SettingSpec("phrase_below_words", "Negative phrase below (words)", 0, "int",
                "Terms with fewer words than this are blocked as negative phrase, others as negative exact "
                "(0: always negative exact).", 0, 20),
    SettingSpec("mix_margin", "Match-type margin (points)", 0.05, "percent",
                "A match type whose ACoS is this far above (or below) the product's other match types reads trim "
                "(or expand).", 0.0, 1.0),
    SettingSpec("budget_shift_share", "Budget shift share", 0.25, "percent",
                "The share of the spend of products to cut that moves to products to grow.", 0.0, 1.0),
    SettingSpec("max_budget_change", "Maximum budget change", 0.30, "percent",
                "The most a campaign's daily budget changes in one run.", 0.0, 5.0),
    SettingSpec("min_days_of_cover", "Minimum days of cover", 30, "int",
                "With an inventory export: a product whose units available last fewer days than this at its sales "
                "rate is never told to grow and gets no extra budget; its Direction reads low stock (common "
                "practice: 30 days; no single source).", 0, 3660),
    SettingSpec("product_id_pattern", "Product identifier pattern", r"[a-z]{1,4}-?\d{3,}|item=.+", "text",
                "A search term matching this regular expression is proposed as a product target, not a keyword "
                "(used when building).", live=False),
    SettingSpec("fold_plurals", "Fold plurals", False, "bool",
                "Compare terms with simple English plurals folded (pots = pot) (used when building).", live=False),
    SettingSpec("list_cap", "Rows in each list", 2000, "int",
                "The most rows the Harvest and Negatives lists hold; the sheet says when more qualify "
                "(used when building).", 1, 1000000, live=False),
    SettingSpec("actions_cap", "Bid changes on the Actions page", 500, "int",
                "The most bid changes the Actions sheet shows, first in Bids' order (by spend when built); every one "
                "is on Bids and the changes command writes them all, and every change of the other kinds is listed "
                "(used when building).", 1, 1000000, live=False),
    SettingSpec("currency_symbol", "Currency symbol", "$", "text",
                "Shown in money formats (used when building).", live=False),
    SettingSpec("decimal_comma", "Decimal comma", False, "bool",
                "Read 1.234,56 as one thousand two hundred and thirty-four point five six (used when reading).",
                live=False),
    SettingSpec("date_order", "Date order", "auto", "choice",
                "How dates such as 01/02/2026 are read when no day above 12 in the column decides: dmy (1 February), "
                "mdy (2 January), ymd (year first only) or auto (refuse what stays ambiguous) (used when reading).",
                live=False, choices=("auto", "dmy", "mdy", "ymd")),
    SettingSpec("orders_above_clicks", "Orders above clicks", "refuse", "choice",
                "refuse: a row with more orders than clicks stops the build, except on display and video ads, whose "
                "view-through orders are read as the clicks; accept: the same everywhere (used when reading).",
                live=False, choices=("refuse", "accept")),
    SettingSpec("period_mismatch", "Exports covering different periods", "refuse", "choice",
                "refuse: stop when the exports cover different days; accept: build from them as they are, with a "
                "warning on the Guide that the figures combine different days (used when reading).",
                live=False, choices=("refuse", "accept")),
    SettingSpec("history_weeks", "Weeks of keyword history kept", 0, "int",
                "The Keyword history keeps the weeks ending within this many weeks of the newest; older weeks are "
                "dropped and the build says so (0: every week) (used when building).", 0, 10000, live=False),
)

SPEC_BY_KEY = MappingProxyType({s.key: s for s in SETTINGS})


@dataclass(frozen=True)
class Settings:
    """The settings of one build. Frozen; made by :func:`load_settings` or directly in tests."""

    thin_margin: float = 0.08
    strong_margin: float = 0.20
    default_target_acos: float = 0.30
    cap_target_at_break_even: str = "yes"
    seek_profit: str = "yes"
    click_elasticity: float = 0.6
    period_days: int = 30
    period_end: dt.date | None = None
    attribution_days: int = 7
    prior_clicks: int = 20
    min_clicks: int = 10
    zero_order_confidence: float = 0.90
    waste_confidence: float = 0.90
    exploration_orders: float = 1.0
    max_bid_cut: float = 0.50
    max_bid_raise: float = 1.00
    bid_floor: float = 0.10
    bid_ceiling: float = 5.00
    min_promote_orders: int = 1
    block_spend_multiple: float = 1.0
    harvest_match_type: str = "exact"
    starting_bid: str = "lower"
    source_negative: str = "yes"
    negative_level: str = "ad group"
    phrase_below_words: int = 0
    mix_margin: float = 0.05
    budget_shift_share: float = 0.25
    max_budget_change: float = 0.30
    min_days_of_cover: int = 30
    product_id_pattern: str = r"[a-z]{1,4}-?\d{3,}|item=.+"
    fold_plurals: bool = False
    list_cap: int = 2000
    actions_cap: int = 500
    history_weeks: int = 0
    currency_symbol: str = "$"
    decimal_comma: bool = False
    date_order: str = "auto"
    period_mismatch: str = "refuse"
    orders_above_clicks: str = "refuse"
    columns: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))
    files: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))
    destinations: MappingProxyType = field(default_factory=lambda: MappingProxyType({}))
    ad_type_benchmarks: MappingProxyType = field(default_factory=lambda: MappingProxyType(
        {"product ads": 0.85, "brand ads": 0.10, "display ads": 0.05}))
    given: frozenset = frozenset()  # the settings settings.toml sets (a period read from dates yields to them)

    def value(self, key: str) -> Any:
        """The value of the setting named key."""
        return getattr(self, key)

    def replace(self, **changes: Any) -> "Settings":
        """A copy with some values changed."""
        values = {f.name: getattr(self, f.name) for f in fields(self)}
        values.update(changes)
        return Settings(**values)


YES_NO = {"true": True, "yes": True, "false": False, "no": False}


def coerce_setting(spec: SettingSpec, raw: Any, file: str) -> tuple[Any, Problem | None]:
    """The TOML value raw as the setting's kind, or a problem saying what was expected."""
    def bad(expected: str) -> tuple[Any, Problem]:
        return spec.default, Problem(file, None, spec.key, f"expected {expected}, got {raw!r}")

    if spec.kind in ("percent", "number", "money", "int"):
        if isinstance(raw, str) and spec.kind == "percent" and raw.strip().endswith("%"):
            try:
                raw = float(raw.strip()[:-1]) / 100
            except ValueError:
                return bad("a percentage such as 8% or 0.08")
        if isinstance(raw, bool) or not isinstance(raw, (int, float)):
            return bad("a number")
        if spec.kind == "int" and int(raw) != raw:
            return bad("a whole number")
        value = int(raw) if spec.kind == "int" else float(raw)
        if (spec.low is not None and value < spec.low) or (spec.high is not None and value > spec.high):
            if spec.kind == "percent":
                return bad(f"a percentage from {spec.low:.0%} to {spec.high:.0%}, written as 8% or 0.08")
            return bad(f"a value from {spec.low:g} to {spec.high:g}")
        return value, None
    if spec.kind == "date":
        if isinstance(raw, dt.datetime):
            return raw.date(), None
        if isinstance(raw, dt.date):
            return raw, None
        if isinstance(raw, str):
            try:
                return dt.date.fromisoformat(raw.strip()), None
            except ValueError:
                pass
        return bad("a date written as 2026-11-29")
    if spec.kind == "bool":
        if isinstance(raw, bool):
            return raw, None
        if isinstance(raw, str) and raw.strip().lower() in YES_NO:
            return YES_NO[raw.strip().lower()], None
        return bad("true or false (yes or no)")
    if isinstance(raw, bool) and spec.choices == ("yes", "no"):
        return ("yes" if raw else "no"), None  # one style of yes/no everywhere: true/false, yes/no accepted
    if not isinstance(raw, str):
        return bad("text")
    if (problem := text_problem(raw, setting=True)) is not None:
        return spec.default, Problem(file, None, spec.key, f"{problem}, got {raw!r}")
    if spec.kind == "choice":
        value = " ".join(raw.strip().lower().split())
        if value not in spec.choices:
            return bad(" or ".join(spec.choices))
        return value, None
    return raw, None


def _known_tables(columns: dict, files: dict, problems: list[Problem]) -> tuple[dict, dict]:
    """[columns] and [files] without the tables and columns the contract does not know (each reported)."""
    tables = ", ".join(TABLE_BY_NAME)
    kept_columns: dict = {}
    for table, cols in columns.items():
        rule = TABLE_BY_NAME.get(table)
        if rule is None:
            problems.append(Problem(SETTINGS_FILE, None, f"columns.{table}",
                                    f"unknown table; expected one of {tables}"))
            continue
        names = [col.name for col in rule.columns] + list(DATED_TABLES.get(table, ()))
        kept_columns[table] = {}
        for name, header in cols.items():
            if name not in names:
                problems.append(Problem(SETTINGS_FILE, None, f"columns.{table}.{name}",
                                        f"unknown column of {table}; expected one of {', '.join(names)}"))
            elif not isinstance(header, str):
                problems.append(Problem(SETTINGS_FILE, None, f"columns.{table}.{name}",
                                        f"expected the header as text, such as {name} = \"My header\", "
                                        f"got {header!r}"))
            elif (problem := text_problem(header, setting=True)) is not None:
                problems.append(Problem(SETTINGS_FILE, None, f"columns.{table}.{name}", problem))
            else:
                kept_columns[table][name] = header
    kept_files: dict = {}
    for table, name in files.items():
        if table not in TABLE_BY_NAME:
            problems.append(Problem(SETTINGS_FILE, None, f"files.{table}", f"unknown table; expected one of {tables}"))
        elif (problem := text_problem(name, setting=True)) is not None:
            problems.append(Problem(SETTINGS_FILE, None, f"files.{table}", problem))
        else:
            kept_files[table] = name
    return kept_columns, kept_files


MAX_SETTINGS_BYTES = 1 << 20
"""settings.toml holds a few dozen lines; a file over 1 MiB is refused before it is read."""
MAX_SETTINGS_NESTING = 16
"""Arrays, inline tables and dotted keys nested deeper than this are refused before parsing (ours nest three)."""


MAX_SETTINGS_ENTRIES = 2_000
"""Keys and array items counted over the whole file; every setting, column and file name fits in a few hundred."""


def count_entries(data: Any) -> int:
    """Keys and array items in parsed TOML, counted through every table and array."""
    if isinstance(data, dict):
        return len(data) + sum(count_entries(v) for v in data.values())
    if isinstance(data, list):
        return len(data) + sum(count_entries(v) for v in data)
    return 0


def settings_text(path: Path) -> tuple[str, str | None]:
    """The text of settings.toml, or a refusal saying why it cannot be read safely.

    The link is followed to a regular file (a link loop, a folder, a pipe or a device is refused),
    at most MAX_SETTINGS_BYTES are read (a file that grows while read is refused too), the text
    must be UTF-8, and arrays and inline tables may nest at most MAX_SETTINGS_NESTING deep.
    """
    try:
        target = path.resolve(strict=True)
        info = os.stat(target)
    except RuntimeError:
        return "", "is a link that leads back to itself (a link loop); replace it with the file itself"
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            return "", "is a link that leads back to itself (a link loop); replace it with the file itself"
        return "", f"cannot be read ({exc.strerror or exc}); check the link or the file's permissions"
    if not stat.S_ISREG(info.st_mode):
        return "", "is not a plain file (a folder, a pipe or a device); put the settings text in a file"
    if info.st_size > MAX_SETTINGS_BYTES:
        return "", (f"is {info.st_size:,} bytes, more than the {MAX_SETTINGS_BYTES:,} a settings file may hold; "
                    "keep only the settings you change")
    try:
        with open(target, "rb") as handle:
            raw = handle.read(MAX_SETTINGS_BYTES + 1)
    except OSError as exc:
        return "", f"cannot be read ({exc.strerror or exc}); check the file's permissions"
    if len(raw) > MAX_SETTINGS_BYTES:
        return "", f"holds more than the {MAX_SETTINGS_BYTES:,} bytes a settings file may hold"
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        return "", f"is not UTF-8 text (byte {exc.start}); save it as UTF-8"
    depth = nesting_depth(text)
    if depth > MAX_SETTINGS_NESTING:
        return "", (f"nests arrays, inline tables or dotted keys {depth} deep, more than {MAX_SETTINGS_NESTING}; "
                    "settings need at most two levels")
    return text, None


def nesting_depth(text: str) -> int:
    """The deepest nesting in TOML text, outside strings and comments (a bound, not a parse).

    Counted: [ and { open, and the dots of a dotted key on one line (a.b.c nests three tables;
    a dot between two digits is a number's, not a key's).
    """
    depth = deepest = 0
    dots = 0
    quote = ""
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch == "\n":
            dots = 0
        if quote:
            if ch == "\\" and quote == '"':
                i += 2
                continue
            if ch in (quote, "\n"):
                quote = ""
        elif ch in "\"'":
            quote = ch
        elif ch == "#":
            end = text.find("\n", i)
            i = n if end < 0 else end
            continue
        elif ch in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif ch in "]}":
            depth = max(0, depth - 1)
        elif ch == "." and not (0 < i < n - 1 and text[i - 1].isdigit() and text[i + 1].isdigit()):
            dots += 1
            deepest = max(deepest, depth + dots + 1)
        i += 1
    return deepest


def load_settings(folder: Path) -> tuple[Settings, list[Problem]]:
    """Read settings.toml from folder if present; defaults otherwise.

    Returns:
        The settings and the problems found (unknown keys, wrong types, bad tables).
    """
    path = Path(folder) / SETTINGS_FILE
    if not os.path.lexists(path):
        return Settings(), []
    text, refusal = settings_text(path)
    if refusal:
        return Settings(), [Problem(SETTINGS_FILE, None, None, refusal)]
    try:
        data = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, RecursionError) as exc:
        return Settings(), [Problem(SETTINGS_FILE, None, None, f"not valid TOML: {exc}")]
    entries = count_entries(data)
    if entries > MAX_SETTINGS_ENTRIES:
        return Settings(), [Problem(SETTINGS_FILE, None, None,
                                    f"holds {entries:,} keys and values, more than the {MAX_SETTINGS_ENTRIES:,} a "
                                    "settings file may hold; keep only the settings you change")]
    problems: list[Problem] = []
    values: dict[str, Any] = {}
    for key, raw in data.items():
        if key in ("columns", "files", "destinations", "ad_type_benchmarks"):
            continue
        spec = SPEC_BY_KEY.get(key)
        if spec is None:
            known = ", ".join(s.key for s in SETTINGS)
            close = difflib.get_close_matches(str(key).lower(), [s.key for s in SETTINGS], n=1, cutoff=0.5)
            hint = f"did you mean {close[0]}? " if close else ""
            problems.append(Problem(SETTINGS_FILE, None, key, f"unknown setting; {hint}known settings: {known}, [columns], [files], [destinations], [ad_type_benchmarks]"))
            continue
        value, problem = coerce_setting(spec, raw, SETTINGS_FILE)
        if problem:
            problems.append(problem)
        else:
            values[key] = value
    columns = data.get("columns", {})
    files = data.get("files", {})
    if not isinstance(columns, dict) or not all(isinstance(v, dict) for v in columns.values()):
        problems.append(Problem(SETTINGS_FILE, None, "columns",
                                "expected tables such as [columns.ad_products] with spend = \"Cost (USD)\""))
        columns = {}
    if not isinstance(files, dict) or not all(isinstance(v, str) for v in files.values()):
        problems.append(Problem(SETTINGS_FILE, None, "files", "expected [files] with catalog = \"my products.csv\""))
        files = {}
    columns, files = _known_tables(columns, files, problems)
    mapping = {table: MappingProxyType({str(k): str(v) for k, v in cols.items()}) for table, cols in columns.items()}
    destinations = _destinations(data.get("destinations", {}), problems)
    benchmarks = data.get("ad_type_benchmarks")
    if benchmarks is not None:
        if (not isinstance(benchmarks, dict) or not all(isinstance(v, (int, float)) and not isinstance(v, bool)
                                                        and 0 <= v <= 1 for v in benchmarks.values())):
            problems.append(Problem(SETTINGS_FILE, None, "ad_type_benchmarks",
                                    'expected [ad_type_benchmarks] with "product ads" = 0.85 and the like (0 to 1)'))
        elif any(text_problem(str(k), setting=True) for k in benchmarks):
            key = next(str(k) for k in benchmarks if text_problem(str(k), setting=True))
            problems.append(Problem(SETTINGS_FILE, None, f"ad_type_benchmarks.{key!r}",
                                    str(text_problem(key, setting=True))))
        else:
            values["ad_type_benchmarks"] = MappingProxyType({str(k): float(v) for k, v in benchmarks.items()})
    if "product_id_pattern" in values:
        try:
            re.compile(values["product_id_pattern"])
        except re.error as exc:
            problems.append(Problem(SETTINGS_FILE, None, "product_id_pattern", f"not a valid regular expression: {exc}"))
    return Settings(**values, columns=MappingProxyType(mapping), files=MappingProxyType(dict(files)),
                    destinations=MappingProxyType(destinations), given=frozenset(values)), problems


def _destinations(raw: Any, problems: list[Problem]) -> dict[str, tuple[str, str]]:
    """[destinations]: product_id = { campaign = "...", ad_group = "..." }, where promoted terms go."""
    out: dict[str, tuple[str, str]] = {}
    if not isinstance(raw, dict):
        problems.append(Problem(SETTINGS_FILE, None, "destinations",
                                'expected [destinations] with LF-1001 = { campaign = "...", ad_group = "..." }'))
        return out
    for product, where in raw.items():
        if (not isinstance(where, dict) or not isinstance(where.get("campaign"), str)
                or not isinstance(where.get("ad_group"), str)):
            problems.append(Problem(SETTINGS_FILE, None, f"destinations.{product}",
                                    'expected { campaign = "...", ad_group = "..." }'))
            continue
        found = [(key, text_problem(text, setting=True)) for key, text in
                 (("", str(product)), (".campaign", where["campaign"]), (".ad_group", where["ad_group"]))]
        if any(problem for _, problem in found):
            key, problem = next((k, p) for k, p in found if p)
            problems.append(Problem(SETTINGS_FILE, None, f"destinations.{product}{key}", problem))
            continue
        out[str(product)] = (where["campaign"].strip(), where["ad_group"].strip())
    return out
