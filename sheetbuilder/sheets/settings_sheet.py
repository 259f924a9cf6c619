"""The Settings sheet: one named cell per setting, with validation and a one-line explanation."""
from __future__ import annotations

import datetime as dt

from sheetbuilder.reading.account import ACCOUNT_NAME, Account
from sheetbuilder.reading.settings import SETTINGS, Settings
from sheetbuilder.workbook.spec import DATA, INPUT, Cell, PageSetup, Rule, Sheet, Validation

SHEET = "Settings"
FIRST_ROW = 4  # 0-based row of the first setting
AS_BUILT = "As built"  # the column keeping each value as built, so a typed value is told apart in later weeks
HEADERS = ("Setting", "Value", "What it does", "Name in formulas", AS_BUILT)
_STYLE = {"percent": "percent", "number": "ratio", "money": "money", "choice": "text", "int": "int", "date": "date", "text": "text", "bool": "text"}


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
                  as_built: Settings | None = None, account: Account | None = None
                  ) -> tuple[Sheet, list[tuple[str, str]]]:
    """The Settings sheet and the workbook names pointing at its cells.

    period, when the exports carry dates, is the periods.Period read from them; a row says so.
    as_built holds the values from settings.toml or the defaults when settings carries
    last week's typed values; the "As built" column records those, so a typed value is
    told apart from the built one in every later week.
    """
    as_built = settings if as_built is None else as_built
    rows: list[list[Cell | None]] = [
        [Cell("Settings", style="title")],
        [Cell("Cream cells with blue text are inputs: change them and every sheet updates. "
              "Grey-text rows were used while reading the exports; change settings.toml and rebuild.",
              style="note")],
        [None],
        [Cell(header, style="header") for header in HEADERS],
    ]
    names: list[tuple[str, str]] = []
    validations: list[Validation] = []
    for i, spec in enumerate(SETTINGS):
        row = FIRST_ROW + i
        style = _STYLE[spec.kind]
        value = _shown(spec, settings.value(spec.key))
        built = _shown(spec, as_built.value(spec.key))
        if spec.live and value != built:  # carried from last week's workbook: shaded apart, with a note
            cell = Cell(value, style=style + "_carried", kind=INPUT,
                        note=f"Carried from last week's workbook; settings.toml or the default gives {built}. "
                             "Type that value back to follow settings.toml again.")
            validation = _validation(spec, row)
            if validation:
                validations.append(validation)
        elif spec.live:
            cell = Cell(value, style=style + "_input", kind=INPUT)
            validation = _validation(spec, row)
            if validation:
                validations.append(validation)
        else:
            cell = Cell(value, style=style, kind=DATA)
        rows.append([Cell(spec.label), cell, Cell(spec.help, style="text" if spec.live else "note"),
                     Cell(spec.key, style="note"), Cell(built, style=style)])
        names.append((spec.key, f"=Settings!$B${row + 1}"))
    built_row = FIRST_ROW + len(SETTINGS)
    rows.append([Cell("Built on"), Cell(built_on, style="date"),
                 Cell("The day this workbook was built (for the attribution-window warning).", style="note"),
                 Cell("built_on", style="note")])
    names.append(("built_on", f"=Settings!$B${built_row + 1}"))
    if account is not None:  # read back by --previous next week to tell this account from another
        rows.append([Cell("Account"), Cell(account.name, style="text"),
                     Cell(f"The exports folder this workbook was built from: {len(account.products)} products, "
                          f"{len(account.campaigns)} campaigns, fingerprint {account.fingerprint}.", style="note"),
                     Cell(ACCOUNT_NAME, style="note")])
        names.append((ACCOUNT_NAME, f"=Settings!$B${built_row + 2}"))
    if period is not None:
        used = [k for k in ("period_days", "period_end") if k not in settings.given]
        rows.append([Cell("Period in the exports"), Cell(str(period), style="text"),
                     Cell("Read from the exports' dates; " + (f"used for {' and '.join(used)}." if used else
                          "settings.toml sets the period, so it was not used."), style="note")])
    mapped = [(table, canon, source) for table, cols in sorted(settings.columns.items())
              for canon, source in sorted(cols.items())]
    if mapped:
        rows.append([None])
        rows.append([Cell("Column mapping used when reading", style="subtitle")])
        for table, canon, source in mapped:
            rows.append([Cell(f"{table}.{canon}"), Cell(source), Cell("header in your file", style="note")])
    sheet = Sheet(SHEET, above=rows, widths={0: 28, 1: 14, 2: 90, 3: 22, 4: 12}, validations=validations,
                  freeze=(FIRST_ROW, 0), tab_color="#B08A1E",
                  page=PageSetup(repeat_rows=(FIRST_ROW - 1, FIRST_ROW - 1)))
    return sheet, names
