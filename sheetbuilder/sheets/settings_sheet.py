"""The Settings sheet: one named cell per setting, with validation and a one-line explanation.

Each live setting is typed in its Value cell, but the formulas read its In use cell: the typed value
when it is valid (a number within the setting's range, a whole number where one is asked, a date,
one of the choices), else the As built value. A paste bypasses data validation, so text pasted
into a numeric setting would otherwise turn thousands of formula cells into errors; here it costs
one flag in the row's Check cell and a count on the Guide. `typed_problem` is the same rule in
Python, for the commands that read a saved workbook's typed values.
"""
from __future__ import annotations

import datetime as dt

from sheetbuilder.reading.account import ACCOUNT_NAME, Account
from sheetbuilder.reading.settings import SETTINGS, Settings, SettingSpec
from sheetbuilder.values import shown
from sheetbuilder.workbook.formula import col_letter
from sheetbuilder.workbook.spec import DATA, INPUT, Cell, PageSetup, Rule, Sheet, Validation

SHEET = "Settings"
FIRST_ROW = 4  # 0-based row of the first setting
AS_BUILT = "As built"  # the column keeping each value as built, so a typed value is told apart in later weeks
IN_USE = "In use"  # the checked cell the formulas read (the defined name of the setting points at it)
HEADERS = ("Setting", "Value", IN_USE, "Check", "What it does", "Name in formulas", AS_BUILT)
VALUE, USED, CHECK, HELP, NAME, BUILT = 1, 2, 3, 4, 5, 6  # 0-based columns; Setting is column 0
TYPED_SUFFIX = "_typed"  # the defined name of a live setting's typed Value cell is its key with this suffix
NOT_VALID_NAME = "settings_not_valid"  # the count of live settings whose typed value is not valid
DATES = (dt.date(2000, 1, 1), dt.date(2100, 12, 31))  # the dates a date setting accepts (its validation too)
_STYLE = {"percent": "percent", "number": "ratio", "money": "money", "choice": "text", "int": "int", "date": "date", "text": "text", "bool": "text"}


DESTINATIONS_NAME = "sb_destinations"  # the defined name over the destinations the build used (product, campaign,
# ad group): settings.toml is not in the workbook, so `changes` reads them here to plan the adds as the build did


def typed_name(key: str) -> str:
    """The defined name of a live setting's typed Value cell."""
    return key + TYPED_SUFFIX


def _serial(day: dt.date) -> int:
    """A date as the spreadsheet's day number (1900 date system)."""
    return (day - dt.date(1899, 12, 30)).days


def _number_text(spec: SettingSpec, value) -> str:
    """A setting's number as its cell shows it."""
    if spec.kind == "percent":
        return f"{value * 100:g}%"
    if spec.kind == "money":
        return f"{value:.2f}"
    return f"{value:g}"


def setting_text(spec: SettingSpec, value) -> str:
    """A setting's value as a message shows it (a percentage as 30%, money with cents, a date as ISO)."""
    if spec.kind == "date":
        if isinstance(value, dt.datetime):
            value = value.date()
        return value.isoformat() if isinstance(value, dt.date) else "blank (no period end)"
    if spec.kind == "choice" or not isinstance(value, (int, float)) or isinstance(value, bool):
        return str(value)
    return _number_text(spec, value)


def typed_problem(spec: SettingSpec, raw) -> str | None:
    """Why a value typed in a live setting's Value cell is not used (the In use cell's rule), or None.

    The words are those the row's Check cell shows before ': using the as-built value'.
    """
    if spec.kind == "choice":
        text = raw if isinstance(raw, str) else ("" if raw is None else str(raw))
        return None if text.lower() in spec.choices else "not one of " + ", ".join(spec.choices)
    if spec.kind == "date":
        if raw is None or raw == "":
            return None
        if isinstance(raw, (dt.date, dt.datetime)):
            day = raw.date() if isinstance(raw, dt.datetime) else raw
            return None if DATES[0] <= day <= DATES[1] else f"outside {DATES[0]} to {DATES[1]}"
        return "not a date"
    if raw is None or raw == "":
        return "blank"
    if isinstance(raw, bool) or not isinstance(raw, (int, float)):
        return "not a number"
    if spec.kind == "int" and int(raw) != raw:
        return "not a whole number"
    if not spec.low <= raw <= spec.high:
        return f"outside {_number_text(spec, spec.low)} to {_number_text(spec, spec.high)}"
    return None


def not_valid_text(spec: SettingSpec, raw, why: str) -> str:
    """What a command says of a typed value typed_problem refuses (why is its answer)."""
    if why == "blank":
        return f"nothing is typed for {spec.label}"
    return f"{shown(raw)} typed for {spec.label} is {why}"


def _quoted(text: str) -> str:
    return '"' + text.replace('"', '""') + '"'


def _checked_formulas(spec: SettingSpec, row: int, built) -> tuple[str, str]:
    """(In use, Check) formulas of a live setting on 0-based row: the typed value when valid, else As built."""
    b, g = f"{col_letter(VALUE)}{row + 1}", f"{col_letter(BUILT)}{row + 1}"
    using = ": using the as-built value " + setting_text(spec, built)

    def flag(words: str) -> str:
        return _quoted(words + using)

    if spec.kind == "choice":
        valid = "OR(" + ",".join(f"LOWER({b})={_quoted(c)}" for c in spec.choices) + ")"
        words = flag("not one of " + ", ".join(spec.choices))
        return (f"=IFERROR(IF({valid},LOWER({b}),{g}),{g})", f'=IFERROR(IF({valid},"",{words}),{words})')
    if spec.kind == "date":
        fallback = '""' if built is None else g
        within = f"AND({b}>={_serial(DATES[0])},{b}<={_serial(DATES[1])})"
        return (f'=IF(ISNUMBER({b}),IF({within},{b},{fallback}),IF(ISBLANK({b}),"",{fallback}))',
                f'=IF(ISNUMBER({b}),IF({within},"",{flag(f"outside {DATES[0]} to {DATES[1]}")}),'
                f'IF(ISBLANK({b}),"",{flag("not a date")}))')
    within = f"AND({b}>={spec.low!r},{b}<={spec.high!r})"
    outside = flag(f"outside {_number_text(spec, spec.low)} to {_number_text(spec, spec.high)}")
    if spec.kind == "int":
        valid = f"AND({b}>={spec.low!r},{b}<={spec.high!r},INT({b})={b})"
        wrong = f'IF(INT({b})={b},{outside},{flag("not a whole number")})'
    else:
        valid, wrong = within, outside
    return (f"=IF(ISNUMBER({b}),IF({valid},{b},{g}),{g})",
            f'=IF(ISNUMBER({b}),IF({valid},"",{wrong}),IF(ISBLANK({b}),{flag("blank")},{flag("not a number")}))')


def _validation(spec, row: int) -> Validation | None:
    """The data validation of a live setting's cell at row."""
    if spec.kind in ("percent", "number", "money"):
        rule = Rule("decimal", low=spec.low, high=spec.high)
        error = f"Enter a number from {spec.low} to {spec.high} (percentages as 8% or 0.08)."
    elif spec.kind == "int":
        rule = Rule("integer", low=int(spec.low), high=int(spec.high))
        error = f"Enter a whole number from {int(spec.low)} to {int(spec.high)}."
    elif spec.kind == "choice":
        rule = Rule("one of", tuple(spec.choices))
        error = "Choose one of: " + ", ".join(spec.choices)
    elif spec.kind == "date":
        rule = Rule("date", low=dt.datetime(2000, 1, 1), high=dt.datetime(2100, 12, 31))
        error = "Enter a date, or leave it blank."
    else:
        return None
    return Validation(row, 1, rule, error_title="Not a valid value", error_message=error,
                      input_title=spec.label[:32], input_message=spec.help[:255])


def _shown(spec, value):
    """A setting's value as its cell shows it."""
    if spec.kind == "bool":
        return "yes" if value else "no"
    return value


def plan_settings(settings: Settings, built_on: dt.date, period=None,
                  as_built: Settings | None = None, account: Account | None = None,
                  beside: dict[str, str] | None = None) -> tuple[Sheet, list[tuple[str, str]]]:
    """The Settings sheet and the workbook names pointing at its cells.

    period, when the exports carry dates, is the periods.Period read from them; a row says so.
    as_built holds the values from settings.toml or the defaults when settings carries
    last week's typed values; the "As built" column records those, so a typed value is
    told apart from the built one in every later week.
    beside: {setting key: text} added after the setting's explanation (the click elasticity estimated
    from the keyword history).
    """
    as_built = settings if as_built is None else as_built
    rows: list[list[Cell | None]] = [
        [Cell("Settings", style="title")],
        [Cell("Cream cells with blue text are inputs: change them and every sheet updates through In use, which "
              "holds the As built value while a typed value is not valid (Check says why). Grey-text rows were used "
              "while reading the exports; change settings.toml and rebuild.", style="note")],
        [None],
        [Cell(header, style="header") for header in HEADERS],
    ]
    names: list[tuple[str, str]] = []
    validations: list[Validation] = []
    checks: list[str] = []
    not_valid = 0
    for i, spec in enumerate(SETTINGS):
        row = FIRST_ROW + i
        style = _STYLE[spec.kind]
        value = _shown(spec, settings.value(spec.key))
        built = _shown(spec, as_built.value(spec.key))
        help_text = spec.help + (" " + beside[spec.key] if beside and spec.key in beside else "")
        cells: list[Cell | None] = [Cell(spec.label), None, None, None,
                                    Cell(help_text, style="text" if spec.live else "note"),
                                    Cell(spec.key, style="note"), Cell(built, style=style)]
        if not spec.live:
            cells[VALUE] = Cell(value, style=style, kind=DATA)
            names.append((spec.key, f"=Settings!${col_letter(VALUE)}${row + 1}"))
            rows.append(cells)
            continue
        if value != built:  # carried from last week's workbook: shaded apart, with a note
            cells[VALUE] = Cell(value, style=style + "_carried", kind=INPUT,
                                note=f"Carried from last week's workbook; settings.toml or the default gives {built}. "
                                     "Type that value back to follow settings.toml again.")
        else:
            cells[VALUE] = Cell(value, style=style + "_input", kind=INPUT)
        validation = _validation(spec, row)
        if validation:
            validations.append(validation)
        used, check = _checked_formulas(spec, row, built)
        problem = typed_problem(spec, value)
        not_valid += problem is not None
        cells[USED] = Cell(built if problem else value, used, style)
        cells[CHECK] = Cell(f"{problem}: using the as-built value {setting_text(spec, built)}" if problem else "",
                            check, "alert")
        checks.append(f"{col_letter(CHECK)}{row + 1}")
        rows.append(cells)
        names.append((spec.key, f"=Settings!${col_letter(USED)}${row + 1}"))
        names.append((typed_name(spec.key), f"=Settings!${col_letter(VALUE)}${row + 1}"))
    rows[2] = [Cell("Settings not valid"), Cell(not_valid, "=" + "+".join(f'IF({c}="",0,1)' for c in checks), "int"),
               None, None, Cell("Typed values the formulas cannot use (a paste skips the checks on typing): each "
                                "one's Check says why, and its In use cell holds the as-built value instead.",
                                style="note")]
    names.append((NOT_VALID_NAME, f"=Settings!${col_letter(VALUE)}$3"))
    built_row = FIRST_ROW + len(SETTINGS)
    rows.append([Cell("Built on"), Cell(built_on, style="date"), None, None,
                 Cell("The day this workbook was built (for the attribution-window warning).", style="note"),
                 Cell("built_on", style="note")])
    names.append(("built_on", f"=Settings!$B${built_row + 1}"))
    if account is not None:  # read back by --previous next week to tell this account from another
        rows.append([Cell("Account"), Cell(account.name, style="text"), None, None,
                     Cell(f"The exports folder this workbook was built from: {len(account.products)} products, "
                          f"{len(account.campaigns)} campaigns, fingerprint {account.fingerprint}.", style="note"),
                     Cell(ACCOUNT_NAME, style="note")])
        names.append((ACCOUNT_NAME, f"=Settings!$B${built_row + 2}"))
    if period is not None:
        used = [k for k in ("period_days", "period_end") if k not in settings.given]
        rows.append([Cell("Period in the exports"), Cell(str(period), style="text"), None, None,
                     Cell("Read from the exports' dates; " + (f"used for {' and '.join(used)}." if used else
                          "settings.toml sets the period, so it was not used."), style="note")])
    if settings.destinations:  # read back by `changes`, which plans the workbook again from what it holds
        rows.append([None])
        rows.append([Cell("Destinations used (settings.toml [destinations]): product, campaign, ad group",
                          style="subtitle")])
        first = len(rows)
        for product, (campaign, group) in sorted(settings.destinations.items()):
            rows.append([Cell(product), Cell(campaign), Cell(group)])
        names.append((DESTINATIONS_NAME, f"=Settings!$A${first + 1}:$C${len(rows)}"))
    mapped = [(table, canon, source) for table, cols in sorted(settings.columns.items())
              for canon, source in sorted(cols.items())]
    if mapped:
        rows.append([None])
        rows.append([Cell("Column mapping used when reading", style="subtitle")])
        for table, canon, source in mapped:
            rows.append([Cell(f"{table}.{canon}"), Cell(source), None, None, Cell("header in your file", style="note")])
    widths = {0: 28, VALUE: 14, USED: 12, CHECK: 60, HELP: 90, NAME: 22, BUILT: 12}
    sheet = Sheet(SHEET, above=rows, widths=widths, validations=validations, freeze=(FIRST_ROW, 0), tab_color="#B08A1E",
                  page=PageSetup(repeat_rows=(FIRST_ROW - 1, FIRST_ROW - 1)))
    return sheet, names
