"""An independent reference for the Settings sheet's checked cells, in plain Python from the README's rule.

A live setting's In use value is what the user typed when a spreadsheet would take it as valid for the
setting (a number within its declared bounds, a whole number for a count, a date between 2000 and 2100 or
nothing for a date, one of the choices in any letter case), else the value the workbook was built with.
Check is blank exactly when the typed value is used.
"""
from __future__ import annotations

import datetime as dt

FIRST_DAY, LAST_DAY = dt.date(2000, 1, 1), dt.date(2100, 12, 31)


def _usable(spec, typed) -> bool:
    if spec.kind == "choice":
        return isinstance(typed, str) and typed.lower() in spec.choices
    if spec.kind == "date":
        if typed is None or typed == "":
            return True
        day = typed.date() if isinstance(typed, dt.datetime) else typed
        return isinstance(day, dt.date) and FIRST_DAY <= day <= LAST_DAY
    if isinstance(typed, bool) or not isinstance(typed, (int, float)):
        return False
    whole = spec.kind != "int" or float(typed).is_integer()
    return whole and spec.low <= typed <= spec.high


def settings_oracle(spec, typed, as_built) -> tuple[object, bool]:
    """(In use value, whether Check shows a flag) of one live setting."""
    if _usable(spec, typed):
        return (typed.lower() if spec.kind == "choice" else typed), False
    return as_built, True
