"""A saved workbook's change list, computed from the inputs and decisions it holds.

Two commands need it: ``changes`` (this workbook's final list, exported) and ``build --previous``
(last week's final list, followed up in this week's exports). Both read the workbook first, once
(:func:`sheetbuilder.weekly.record.read_saved_workbook`, under the reading guard: a damaged file
is the user's problem), then plan the record it gives with the same code that builds a workbook
(:func:`computed_actions`, outside the guard: a failure there is a bug, reported as an internal
error).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sheetbuilder.sheets.decisions import INVALID
from sheetbuilder.errors import WARNING, Problem
from sheetbuilder.sheets.followup import Followup
from sheetbuilder.weekly.applied import followup_rows, number_or_none, same_exports, span_of
from sheetbuilder.sheets.actions import (ADDS, DEFS as ACTION_DEFS, BID_ROWS, KINDS, SHEET, every_change,
                                         unlisted)
from sheetbuilder.sheets.bids import SHEET as BIDS_SHEET
from sheetbuilder.values import is_blank, is_number
from sheetbuilder.weekly.record import FIRST_ROW, SavedWorkbook, plan_saved
from sheetbuilder.reading.settings import Settings

# The CSV layout is the Actions list's visible columns, as plan_actions declares them.
KEYS = tuple(d.key for d in ACTION_DEFS if not d.hidden)
CHANGE_KEY = ("kind", "campaign", "ad_group", "target", "match_type")  # what a change row changes


def computed_actions(saved: SavedWorkbook) -> tuple[list[tuple[Any, list[Any]]], list[Problem], dict, bool]:
    """([(where, visible values)] of the computed change list, input problems, planned tables, fold_plurals).

    Every change, the bid changes beyond the Actions page too (each where its Bids row is, :class:`OffPage`);
    where is the Actions row of the others.
    """
    plan, problems = (saved.planned, saved.plan_problems) if saved.planned is not None else plan_saved(saved)
    frame, n_bids = every_change(plan.tables)
    block = int(plan.tables[SHEET].totals_values[BID_ROWS])  # the page's bid rows (blank ones included)
    page = min(block, n_bids)  # the bid changes the page shows
    rows: list[tuple[Any, list[Any]]] = []
    for i, record in enumerate(frame[list(KEYS)].itertuples(index=False, name=None)):
        named = dict(zip(KEYS, record))
        where = (FIRST_ROW + i if i < page else FIRST_ROW + block + i - n_bids if i >= n_bids else
                 OffPage(f"{named['target']} ({named['match_type']}) in {named['campaign']} / {named['ad_group']}"))
        rows.append((where, list(record)))
    # A list whose cap is reached holds fewer changes than qualify: said, never dropped in silence.
    beyond = [Problem(sheet, None, None, message) for sheet, message in unlisted(plan.tables)]
    return rows, list(problems) + beyond, plan.tables, saved.settings.fold_plurals


@dataclass(frozen=True)
class OffPage:
    """A bid change beyond the Actions page, named by its target (on Bids it may have been sorted anywhere)."""

    target: str


ON_BIDS = {"New": "Final bid", "Current": "Current bid", "Target or term": "Target", "Money at stake": "Spend"}


def problem_at(where: Any, column: str | None, message: str) -> Problem:
    """The problem of a change: on its Actions row, or on Bids (its column there) for a bid change beyond the page."""
    if isinstance(where, OffPage):
        return Problem(BIDS_SHEET, None, ON_BIDS.get(column, column),
                       f"{message} (the bid change of {where.target}, beyond the Actions page)")
    return Problem(SHEET, where, column, message)


def check_change(row: Any, values: list[Any], context: dict[str, Any]) -> list[Problem]:
    """The problems of one change at row (an Actions row, or :class:`OffPage`); none when it can be written."""
    named = dict(zip(KEYS, values))
    kind, campaign, group, term, new = (named.get(k) for k in ("kind", "campaign", "ad_group", "target", "new"))
    kind = str(kind).strip().lower()
    out: list[Problem] = []

    def bad(column: str, message: str) -> None:
        out.append(problem_at(row, column, message))

    if kind not in KINDS:
        bad("Kind", f"unknown kind {values[0]!r}; expected one of {', '.join(KINDS)}")
        return out
    if kind in ("bid", "budget"):
        if new == INVALID:
            bad("New", f"the {kind}'s Decision is not a valid word or number (its Final shows {INVALID}); "
                       "correct or clear it")
        elif not is_number(new) or new <= 0:
            bad("New", f"a {kind} needs a positive number in New, got {'blank' if is_blank(new) else repr(new)}")
        elif kind == "bid":
            floor, ceiling = context.get("bid_floor"), context.get("bid_ceiling")
            if is_number(floor) and new < floor:
                bad("New", f"the bid {new:g} is below the bid floor {floor:g}")
            if is_number(ceiling) and new > ceiling:
                bad("New", f"the bid {new:g} is above the bid ceiling {ceiling:g}")
    if kind in ADDS:
        if is_blank(campaign) or is_blank(group):
            product = named.get("product_id")
            bad("Campaign" if is_blank(campaign) else "Ad group",
                f"no destination for the term {str(term)!r}"
                + ("" if is_blank(product) else f" (product {str(product)!r})")
                + ": name the product's campaign and ad group under [destinations] in settings.toml and build "
                  "again, or type watch or skip in the term's Decision on Terms")
        elif context.get("has_campaign_sheets") and str(campaign).strip() not in context.get("campaigns", set()):
            bad("Campaign", f"the campaign {str(campaign)!r} is not in the exports (in_campaigns, in_ad_products)")
    if kind in ADDS or kind == "add negative":
        if is_blank(term):
            bad("Target or term", f"an {kind} needs a term")
        if kind == "add negative" and is_blank(campaign):
            bad("Campaign", "a negative needs its campaign")
    return out


def previous_changes(saved: SavedWorkbook) -> tuple[list[dict], dict]:
    """Last week's final change list (the rows `changes` exports) and its planned tables."""
    rows, _, planned, _ = computed_actions(saved)
    # The rows `changes` writes: a row it refuses (no destination, an invalid Decision) was never applicable.
    named = [dict(zip(KEYS, values)) for r, values in rows if not check_change(r, values, saved.context)]
    bids = planned.get("Bids")
    product_of = {}
    if bids is not None and "product_id" in bids.frame:
        product_of = {(r.campaign, r.ad_group, r.target, r.match_type): r.product_id for r in bids.frame[
            ["campaign", "ad_group", "target", "match_type", "product_id"]].itertuples(index=False)}
    for ch in named:
        if is_blank(ch.get("product_id")) and ch.get("kind") == "bid":
            ch["product_id"] = product_of.get((ch["campaign"], ch["ad_group"], ch["target"], ch["match_type"]), "")
    return named, planned


def followup_of(saved: SavedWorkbook, tables: dict, settings: Settings, period: Any = None
                  ) -> tuple[Followup | None, list[Problem]]:
    """The follow-up of last week's workbook against this week's exports, or None and the reason.

    Args:
        saved: last week's workbook, as read.
        tables: this week's input tables (as read, before any carried correction).
        settings: this week's settings.
        period: this week's period read from the exports' dates, when they carry dates.
    """
    name = saved.path.name
    before = {k: None if v is None else v.copy() for k, v in saved.tables.items()}  # planning reads the other
    current = span_of(settings, period)
    last = span_of(saved.settings, None)
    if same_exports(before, tables):
        return None, [Problem(name, None, None, "the previous workbook was built from the same exports as this one; "
                                                "no Follow-up sheet (build it from next week's exports)", WARNING)]
    if last and current and (last.end > current.end or last.start > current.start):
        return None, [Problem(name, None, None, f"the previous workbook's period ({last}) is later than this one's "
                                                f"({current}); no Follow-up sheet", WARNING)]
    changes, planned = previous_changes(saved)  # only once a follow-up is made
    profit = planned["Profit"].frame
    products = {str(r["product_id"]): {k: r[k] for k in ("revenue", "ad_spend", "tacos", "net_profit", "status",
                                                         "direction")}
                for r in profit.to_dict("records")}
    targets = {str(p): float(t) for p, t in zip(profit["product_id"], profit["aim_acos"])  # what its bids aimed at
               if number_or_none(t) is not None}
    rows = followup_rows(changes, before, tables, targets)
    return Followup(rows, products, last, current, name, settings.min_clicks), []

