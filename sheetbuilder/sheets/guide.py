"""The Guide sheet: what the workbook is for, how to use it, what every column means,
the palette legend, the method sources, the cautions and the build record."""
from __future__ import annotations

import datetime as dt

from sheetbuilder.version import __version__
from sheetbuilder.workbook.columns import ColumnDef
from sheetbuilder.errors import Problem
from sheetbuilder.workbook.palette import STATES
from sheetbuilder.sheets.profit import CAUTION, warning_formula, warning_value
from sheetbuilder.sheets.decisions import OWN_COLUMNS_CAP
from sheetbuilder.sheets.settings_sheet import NOT_VALID_NAME
from sheetbuilder.reading.settings import Settings
from sheetbuilder.workbook.spec import INPUT, Cell, PageSetup, Sheet

SHEET = "Guide"

# Which cells respond to edits (issue 13): stated once, here and beside the colour legend.
LIVE_RULE = ("Grey figures are copied from your exports (or worked out from those copies alone), so no edit here "
             "can change them; black figures are formulas that follow your inputs: a cost, price, fee, target, "
             "setting or Decision you change updates every black figure that depends on it.")
EXPORT_LEGEND = ("Grey text: a figure copied from your exports (the row it came from is shown beside it); "
                 "it does not follow any input.")

SHEETS_TEXT = [
    ("Guide", "This page: how to use the workbook, what each column means, sources and cautions."),
    ("Settings", "Thresholds and targets. Change a cream cell and every sheet updates. A typed value the formulas "
                 "cannot use (text pasted into a number, a value out of range) is flagged in its row's Check, and "
                 "In use keeps the as-built value."),
    ("Profit", "Profit after advertising for every product: margin, TACoS, ACoS, net profit, status and "
               "a direction for its ad spend."),
    ("Bids", "A proposed bid for every enabled keyword and product target in an enabled campaign, largest "
             "spend first, with the rule that decided it. Type a bid or 'keep' in Decision; Final bid applies it."),
    ("Terms", "Every customer search term per campaign and ad group, with a live verdict: promote, block, watch "
              "or keep. Type a Decision (promote, block, watch, keep or skip) to override it."),
    ("Lists", "Harvest, Negatives and Actions hold what qualifies at build plus 100 rows of room; they re-fill "
              "live when a threshold or Decision changes, and a line at the top says if more qualify than fit "
              "(rebuild to see them)."),
    ("Harvest", "The terms whose Final is promote: what to add, as which match type, where, at what starting bid."),
    ("Negatives", "The terms whose Final is block: the negative to add, its level and match type, and the rule."),
    ("Mix", "Where the money goes: spend by ad type against a benchmark share, by product and match type with "
            "trim and expand signals, and charts."),
    ("Budget", "A budget-neutral shift of spend from products to cut to products to grow, and each campaign's "
               "daily budget scaled to follow its products."),
    ("Actions", "The changes to review: the first bid changes (500 by default, actions_cap; every bid change is "
                "on Bids, its Final bid), then every keyword and target to add, negative and budget change. "
                "Export every change, bids beyond the page too, with: sheetbuilder changes WORKBOOK -o changes.csv"),
    ("Follow-up", "Built with --previous: what became of last week's changes (applied or not, each target's or "
                  "term's figures in both periods, the outcome in words) and how each product moved since."),
    ("History", "Built with --previous: every change found applied, week by week (week, kind, keys, from, to), "
                "carried into every rebuild and never dropped."),
    ("Keyword history", "Every keyword's and product target's results week by week (impressions, clicks, orders, "
                        "spend, ad sales, bid in force), one row each with its weeks listed oldest first; "
                        "carried into every rebuild with --previous, a week never counted twice. Bids reads each "
                        "keyword's totals over these weeks when this build's week is among them (its hidden History "
                        "columns)."),
    ("Groups", "Which products each ad group advertises, the spend weights used where it advertises several, and "
               "below, each ad group's blended aim ACoS, CVR, order value and price, computed once and fetched "
               "by the Bids and Terms rows."),
    ("Keys", "The Clashes table: where a new negative would block a keyword the list adds or a term that sells "
             "(Already targeted and Already negated on Terms are found among the exports when building)."),
    ("in_ sheets", "The rows of your exports as read, sorted by product. Catalog prices, costs, fees, "
                   "margins and target ACoS are inputs you may correct there, and so are units available on "
                   "in_inventory (a what-if for this week: next week's build reads the new export's stock)."),
    ("Carried edits", "Built with --previous: every value carried from last week's workbook (sheet, key, the "
                      "export's value, your value, the week you first typed it) and every typed number that "
                      "expired because the export shows it applied."),
    ("Unmatched edits", "Built with --previous: every value typed last week that could not be carried (its row "
                        "is gone, or it is not a valid word or number), with the reason."),
]

FOLLOWUP_TEXT = [
    "Built with --previous, the Follow-up sheet takes last week's final change list (the rows `changes` would "
    "export, computed from last week's own exports and decisions) and looks each change up in this week's exports.",
    "Applied: a bid when this week's export shows the planned bid to the cent; a keyword or product target when "
    "it exists in that ad group with that match type; a negative when it is in this week's negatives export; a "
    "budget when the campaign's daily budget equals the planned one. Without a negatives or campaigns export, "
    "those rows read 'cannot tell'.",
    "Outcome compares the move with its intent: a bid cut hopes for lower CPC and ACoS; a raise for more clicks "
    "with ACoS at or under the aim its product's bids had last week (Profit's Aim ACoS then); a negative for no spend on the term; a new keyword for its first clicks and "
    "orders. 'as intended' means both hoped-for effects happened, 'mixed' one, 'not as intended' neither; 'too "
    "few clicks' where either period has fewer than min_clicks.",
    "Compare periods that do not overlap: weekly 7-day exports. Two 30-day exports a week apart share 23 days, "
    "so most of each figure is the same days counted twice; the sheet states the overlap.",
    "A before-and-after comparison is observational: seasonality, competitors, prices and stock move too. "
    "Treat an Outcome as a signal to look closer, not as proof.",
]

DECISIONS_TEXT = [
    "Words (keep, skip, promote, block, watch) are standing instructions: they are carried into every "
    "rebuild with --previous until you clear the cell.",
    "A typed number (a bid, a spend, a budget) is a one-off: once a week's export shows it applied (a bid or "
    "budget equal to it to the cent; a product's spend within 5% of it or 1 currency unit, whichever is larger, "
    "as spend never lands on the cent) it expires, the cell is left blank and Carried edits lists it as applied; "
    "until then it is carried and its note says so.",
    "A corrected cost on in_catalog, a changed setting and 'Your target ACoS' are carried until you type the "
    "export's (or settings.toml's) value back, or the export itself changes to your value.",
    "Carried cells are shaded orange, in italics, with a note saying where they came from.",
    "A Decision that is not a valid word or number (other text, a formula error) shows 'invalid' in its Final "
    "column and is never replaced by the proposal; the changes command refuses it with the reason and "
    "--previous lists it on Unmatched edits.",
    "Your own notes: Profit, Bids, Terms and Budget end with a Notes column of plain text (typed =... stays text). "
    "--previous carries each note by its row's key, whatever order the rows are in, with any column you add right "
    "of Notes (its header and values; up to %d such columns). Carried edits lists them; a note whose row is gone "
    "is listed on Unmatched edits. Notes are never Decisions: changes, Actions and Follow-up ignore them." % OWN_COLUMNS_CAP,
]

STEPS = [
    "1. Read the warning line above: if it shows, the last days' ad sales are still being credited.",
    "2. On Profit, sort or filter by Status and Direction; loss and thin products come first to review.",
    "3. Correct any unit cost, fee or price on in_catalog, or a threshold on Settings: everything recalculates.",
    "4. On Bids, review the proposed bids; type a bid or 'keep' in Decision where you disagree.",
    "5. Raise or lower a product's target ACoS in 'Your target ACoS' on Profit: its Aim ACoS and bids follow "
    "(up to the profit-seeking aim while seek_profit is yes).",
    "6. On Terms, check the verdicts; Harvest lists the terms to add, Negatives the terms to block.",
    "7. On Mix and Budget, see where spend goes and the proposed shift; type a Decision where you disagree.",
    "8. Actions shows the changes you have settled on (bids: the first ones, all on Bids); export every one "
    "with the changes command and apply it.",
    "9. Next week, build from the new exports with --previous this workbook: your edits come along "
    "(see 'Decisions and carried edits' below).",
    "10. The proposals are starting points, not orders: check them before changing your ad account.",
    "Printing: every sheet prints on A4 at the width of its page, with its table's header on every page. Harvest, "
    "Negatives and Actions print the rows filled when the workbook was built: after typing Decisions, rebuild "
    "(with --previous) to print the lists as they stand.",
    "Sorting: Profit, Bids, Terms and in_catalog may be sorted and filtered (Data > Sort on the table, header to "
    "last row; Profit's Total row stays below it): every other sheet finds their rows by key, so every figure "
    "stays right and Harvest, Negatives and Actions re-fill in the new order. The other sheets cannot be sorted; "
    "rows cannot be deleted anywhere: to leave a row out, type keep (Bids) or skip (Terms) in its Decision. "
    "Sort the columns you added right of Notes with the table (select them too), so they stay with their rows.",
    "New products: a product your exports name but your catalog lacks has a row on in_catalog with its unit cost "
    "highlighted; type its price, unit cost and fees there and Profit follows. A product no export names yet can "
    "be typed on a row just below in_catalog's table: it is kept week after week until it sells.",
]

BID_METHOD = [
    "History: each keyword's clicks, orders, spend and ad sales are summed over every week of the Keyword history, "
    "this week included (History clicks and the columns beside it, hidden). Without a history that holds this "
    "week (no period known, or this week's export overlaps a recorded week) a keyword's history is this week's row, "
    "so no week is ever counted twice.",
    "Pooled conversion rates: per product (or shared ad group's blend), the keywords' conversion rates are taken "
    "to follow a Beta prior, fitted by the method of moments with clicks as weights, with a share of keywords that "
    "never convert fitted by one reweighting round (Prior a, Prior b, Never-converting share). Each keyword's "
    "posterior CVR = w x (a + orders) / (a + b + clicks), w the probability it converts at all (1 once it has an "
    "order). Where a product has fewer than 5 keywords with clicks, no orders, or no more spread than chance "
    "gives, the prior is its CVR worth k clicks (k = Smoothing weight on Settings), as before: posterior CVR = "
    "(orders + k x product CVR) / (clicks + k). These working figures come from the exports alone, so they are "
    "written as values (grey); the Posterior CVR follows the Smoothing weight live.",
    "Value per click: a click is worth its conversion rate x the average order value; the bid that meets the "
    "target ACoS is target ACoS x that value, divided by the keyword's CPC-to-bid ratio (its history spend / "
    "clicks x the bid in force each week; else this week's CPC / bid; else 1, as Ratio source says): value bid = "
    "posterior CVR x order value x target ACoS / ratio.",
    "Order value: the keyword's history ad sales / orders when it has orders, else its product's.",
    "Cutting waste on evidence: Waste probability is the posterior probability that a click is worth less than it "
    "costs at the target, (1 - w) + w x BETADIST(CPC / (order value x target ACoS), a + orders, b + clicks - "
    "orders), the CPC being the ratio x the current bid. At or above waste_confidence (Settings, 90%), the bid "
    "is cut to its value bid at once, past the maximum cut, down to the floor (cut on evidence: likely waste).",
    "Steps, not jumps: otherwise the proposal moves from the current bid toward the value bid and never past it, "
    "by at most the maximum cut or raise, rounded to the cent; a raise stops at the bid ceiling and a cut at the "
    "floor.",
    "Data guards, on the history's clicks and orders, after the cut on evidence (a keyword whose history has "
    "decided is cut, however few its clicks and whatever it has spent): no clicks hold the bid. A keyword with no "
    "orders whose history spend is below exploration_orders x target ACoS x order value is held (exploring: "
    "within allowance). No orders after n = ceil(ln(1 - confidence) / ln(1 - product CVR)) clicks (the clicks "
    "after which zero orders would be unlikely) cuts by the maximum cut. A target with no orders is never raised.",
    "Rules (the hidden Rule column): 1 no clicks, 2 no orders after n clicks, 3 (no longer used), 4 no order value "
    "yet, 5 no orders yet: not raised, 6 raise to value bid, 7 lower to value bid, 8 at value bid, 9 raise capped "
    "at the maximum raise, 10 lower capped at the maximum cut, 11 low stock: not raised, 12 cut on evidence, "
    "13 exploring: within allowance.",
    "Stock: a target whose ad group advertises a product low on stock (Profit's Days of cover below the "
    "minimum days of cover) is never raised (low stock: not raised); its cuts still apply.",
    "Target above break-even: break-even ACoS equals the margin before ads; above it, each ad-driven sale "
    "loses money before any other cost (common practice in the trade, no single source). Profit and Bids say so "
    "in Target check.",
    "The aim: bids aim at Profit's Aim ACoS, not always at your target. With seek_profit yes (the default) it is "
    "the lowest of your target, break-even and break-even x e / (1 + e), the ACoS that earns the most profit "
    "after ads when clicks grow as bid^e (e: click elasticity on Settings, 0.6 unless you type another); at "
    "e = 0.6 that is 37.5% of the margin. A seller who wants growth, more sales at less profit, sets seek_profit "
    "to no: the bids then aim at the target, capped at break-even while cap_target_at_break_even is yes. Why "
    "this aim says which rule decided; a product with no positive margin aims at 0 (its bids are cut toward the "
    "floor), one without a known margin at its target.",
    "Shared ad groups: where an ad group advertises several products, their aim ACoS, conversion rate and "
    "order value are blended, weighted by each product's ad spend in the group (see Groups).",
    "Working columns: unhide the columns right of Final bid on Bids to see each step (the history's figures, "
    "the CPC-to-bid ratio, the product's prior, the converting probability, the posterior CVR and the rule "
    "number 1-13; the zero-order clicks are the ad group's, on Groups), then what the long formulas share, "
    "computed once per row: the order value, the prior's shapes in use (Prior a and Prior b as they apply, "
    "from prior_clicks when the product's prior is blank) and the step bid (the moved bid rounded to the cent, "
    "before the floor and the ceiling).",
    "Evidence: README, 'How well the method works on simulated accounts' (results, assumptions and limits).",
]

TERMS_METHOD = [
    "Terms are compared after Unicode NFKC normalisation, case folding, trimming and collapsing whitespace "
    "(plural folding is an option in settings.toml).",
    "promote: at least the minimum orders (Settings), not yet an exact keyword for the same product, and not "
    "the very exact keyword it came from.",
    "low stock: a term that would be promoted, from an ad group advertising a product low on stock (Profit's "
    "Days of cover below the minimum): not promoted (not on Harvest) while the stock runs short.",
    "block: no orders, and spend of at least the product's price x the multiple on Settings (the trade's rule "
    "of thumb: a term that spent the price of the product without a sale is suspect; common practice), or at "
    "least the zero-order clicks of the bid plan.",
    "watch: no orders under both thresholds, or orders below the minimum. keep: selling and already an exact "
    "keyword, or already negated.",
    "Harvest and Negatives are live lists: change a threshold or type a Decision and they re-fill themselves, "
    "in Terms order (largest spend first, as built). A term that looks like a product identifier (the pattern "
    "in settings.toml) is proposed as a product target. Promoted terms from automatic, paused or archived "
    "campaigns need a destination in a live campaign: name one per product under [destinations] in "
    "settings.toml, or choose one.",
    "A change list safe to apply: a promoted term already an exact keyword for its product, or at its "
    "destination, is not added again. The negative in the source ad group is proposed only when the keyword goes "
    "to another ad group of a live campaign. No negative is proposed in a paused or archived campaign, where a "
    "negative already blocks the term, or where it would block a keyword the same list adds or a term that sells "
    "(the Clashes table on Keys). Actions lists each kind largest money at stake first, by the build's figures: "
    "a Decision typed later changes which rows are listed, not their order. Its bid changes are a page, the "
    "first actions_cap of them in Bids' order; the changes command writes every one.",
]

SOURCES = [
    "TACoS, ACoS, break-even ACoS, net margin after ads: definitions in common use in the trade (no single source).",
    "Thin margin below 8% and strong margin from 20%: the trade's rules of thumb (common practice, no source); "
    "change them on Settings.",
    "Spend share against sales share: a product's part of the ad spend compared with its part of the sales; "
    "above 1 it is given more than it brings.",
    "Value-per-click bidding: H. R. Varian, 'Position auctions', International Journal of Industrial "
    "Organization 25 (2007).",
    "Profit-seeking aim: profit m v b^e - b^(e+1) is highest at an ACoS of m e / (1 + e), the inverse-elasticity "
    "rule of pricing applied to the bid (derived in the README). Click elasticity from the keyword history: a "
    "Poisson regression with one fixed effect per keyword, fitted by its conditional likelihood (J. A. Hausman, "
    "B. H. Hall and Z. Griliches, Econometrica 52, 1984).",
    "Pooled conversion rates: empirical-Bayes beta-binomial shrinkage; the prior fitted by the method of moments "
    "with clicks as weights (D. Kleinman, 'Proportions with extraneous variance: single and independent samples', "
    "Journal of the American Statistical Association 68, 1973), with a zero-inflated share of never-converting "
    "keywords fitted by one reweighting round; the fallback, a Beta prior worth k clicks, has the posterior mean "
    "(orders + k p) / (clicks + k).",
    "Zero-order threshold: the binomial chance of no orders in n clicks, (1 - p)^n; at 95% it is close to the "
    "rule of three, n = 3 / p (J. A. Hanley and A. Lippman-Hand, JAMA 249, 1983).",
    "Text normalisation: Unicode Standard Annex #15 (NFKC) and Unicode default case folding.",
    "Text is data: imported text is always written as text, never as a formula; CSV files sheetbuilder writes "
    "escape cells that begin with = + - @, tab or carriage return (OWASP, 'CSV Injection').",
    "Cell and sheet limits: Microsoft, 'Excel specifications and limits' (32,767 characters per cell, "
    "1,048,576 rows per sheet).",
]


LINE = 130  # characters of Arial 10 in a line of column B (102 wide, about 720 pixels), with room to spare
LINE_HEIGHT = 13.0  # points per line of Arial 10


def _lines(cell: Cell | None) -> int:
    """The lines a wrapped cell's text takes in column B (spreadsheets do not size rows when opening a file)."""
    if cell is None or cell.style not in ("wrap", "warning_wrap"):
        return 1
    return -(-len(str(cell.value)) // LINE)


def _wrapped(cell: Cell | None, always: bool = False) -> Cell | None:
    """cell, wrapping inside its column (top-aligned) when its text is longer than a line of column B."""
    if cell is None or not isinstance(cell.value, str) or cell.formula or (len(cell.value) <= LINE and not always):
        return cell
    style = {"text": "wrap", "warning": "warning_wrap"}.get(cell.style, cell.style)
    return Cell(cell.value, cell.formula, style, cell.kind, cell.note, cell.link)


def _column_rows(title: str, defs: list[ColumnDef]) -> list[list[Cell | None]]:
    """A section listing a sheet's visible columns and their meanings."""
    rows: list[list[Cell | None]] = [[Cell(title, style="subtitle")]]
    rows += [[Cell(d.header), Cell(d.help, style="text")] for d in defs if not d.hidden]
    return rows + [[None]]


# Lights up when a typed setting is not valid (the Settings sheet's count; the formulas use its as-built value).
# The count itself is a key figure (SETTINGS_FIGURE): no & on a bare number (DEVELOPERS.md).
SETTINGS_WARNING = ("A typed setting is not valid: its as-built value is in use instead (see the key figure below and "
                    "the Check column on Settings).")
SETTINGS_CHECK = f'=IF({NOT_VALID_NAME}=0,"","{SETTINGS_WARNING}")'
SETTINGS_FIGURE = "Typed settings not valid (as-built value in use)"


def plan_guide(settings: Settings, built_on: dt.date, column_sections: list[tuple[str, list[ColumnDef]]],
               warnings: list[Problem], checksums: dict[str, str], sources: dict[str, str],
               figures: list | None = None, looks: list | None = None,
               exports: list[tuple[str, str]] = ()) -> Sheet:
    """The Guide sheet, with the dashboard's live figures and the first-look lists at the top.

    exports: (label, text) lines for the build record saying what the exports hold (currency, period).
    """
    rows: list[list[Cell | None]] = [
        [Cell("sheetbuilder: profit after ads, bids, and where ad spend goes", style="title")],
        [Cell("What it is for", style="subtitle"), Cell("This workbook turns your store-sales and sponsored-ad exports and your unit costs into live "
              "figures: which products lose money once ads are paid, where spend is out of proportion to sales,",
              style="text")],
        [None, Cell("which bids to move toward each product's target ACoS, which search terms to promote or block, "
                    "how spend splits across ad and match types, and how budget should shift.", style="text")],
        [None, Cell(LIVE_RULE, style="text")],
        [None, Cell("The Actions sheet lists the changes you settle on.", style="text")],
        [Cell("Caution", style="warning"), Cell(CAUTION + " These are decision aids to review before anything "
              "is changed in an ad account; check every proposal against what you know of your business.",
              style="warning")],
        [Cell("Data freshness", style="subtitle"),
         Cell(warning_value(settings, built_on), warning_formula(), "alert")],
        [Cell("Settings", style="subtitle"), Cell("", SETTINGS_CHECK, "alert")],
        [None],
        [Cell("Key figures", style="subtitle"), Cell("Live: they follow every change you make.", style="note")],
        *[[Cell(f.label), Cell(f.value, f.formula, f.style + "_left")] for f in (figures or [])],
        [None],
    ]
    headers = []
    for look in looks or []:
        headers.append(len(rows) + 1)
        rows += [*look.rows(len(rows)), [None]]
    rows += [
        [Cell("How to use it", style="subtitle")],
        *[[None, Cell(step, style="text")] for step in STEPS],
        [None],
        [Cell("Sheets", style="subtitle")],
        *[[Cell(name), Cell(text, style="text")] for name, text in SHEETS_TEXT],
        [None],
    ]
    for title, defs in column_sections:
        rows += _column_rows(title, defs)
    rows += [[Cell("Colours", style="subtitle"),
              Cell("Colour never carries meaning alone: the Status and Direction words say the same.", style="note")]]
    for state in STATES.values():
        rows.append([Cell(state.name, style="state_" + state.name), Cell(state.meaning)])
    rows.append([Cell(0, style="money_input", kind=INPUT), Cell("Cream with blue text: an input cell you may change.")])
    rows.append([Cell(0, style="money_carried", kind=INPUT),
                 Cell("Shaded orange, in italics, with a note: a value carried from last week's workbook.")])
    rows.append([Cell(0, style="money_export"), Cell(EXPORT_LEGEND)])
    rows += [[None], [Cell("Decisions and carried edits", style="subtitle")]]
    rows += [[None, Cell(line, style="text")] for line in DECISIONS_TEXT]
    rows += [[None], [Cell("Following up last week's changes", style="subtitle")]]
    rows += [[None, Cell(line, style="text")] for line in FOLLOWUP_TEXT]
    rows += [[None], [Cell("How the bid plan works", style="subtitle")]]
    rows += [[None, Cell(line, style="text")] for line in BID_METHOD]
    rows += [[None], [Cell("How search terms are judged", style="subtitle")]]
    rows += [[None, Cell(line, style="text")] for line in TERMS_METHOD]
    rows += [[None], [Cell("Method and sources", style="subtitle")]]
    rows += [[None, Cell(s, style="text")] for s in SOURCES]
    if warnings:
        rows += [[None], [Cell("Notes from reading the exports", style="subtitle")]]
        rows += [[Cell(p.where()), Cell(p.message, style="text")] for p in warnings[:200]]
        if len(warnings) > 200:
            rows.append([None, Cell(f"... and {len(warnings) - 200} more (see the command's output).")])
    rows += [[None], [Cell("Build record", style="subtitle")],
             [Cell("Tool version"), Cell(f"sheetbuilder {__version__}")],
             [Cell("Built on"), Cell(built_on.isoformat())]]
    rows += [[Cell(label), Cell(text)] for label, text in exports]
    for table, digest in sorted(checksums.items()):
        rows.append([Cell(f"Input: {table}"), Cell(f"{sources.get(table, '')}  sha256 {digest}")])
    # Long text wraps inside column B (rows grow to fit when opened), so the page prints at a readable scale.
    rows = [[_wrapped(cell) if col == 1 else cell for col, cell in enumerate(cells)] for cells in rows]
    heights = {r: LINE_HEIGHT * _lines(cells[1]) for r, cells in enumerate(rows) if len(cells) > 1 and _lines(cells[1]) > 1}
    heights.update({r: 2 * LINE_HEIGHT for r in headers})  # room between the header's border and the first line
    for r in heights:  # the label beside wrapped text stands at its first line
        rows[r][0] = _wrapped(rows[r][0], always=True)
    return Sheet(SHEET, above=rows, widths={0: 32, 1: 102, 2: 11}, heights=heights, page=PageSetup(landscape=False), tab_color="#3A2A78")
