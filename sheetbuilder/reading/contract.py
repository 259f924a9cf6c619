"""The input contract: which files, which columns, what each column holds.

Canonical table and column names are the project's own. Header matching ignores case,
spaces and punctuation and knows generic synonyms of the trade; anything else is
mapped in settings.toml under [columns.<table>].
"""
from __future__ import annotations

import re
from dataclasses import dataclass

TEXT = "text"          # free text, kept exactly as written
COUNT = "count"        # whole numbers >= 0; blank = 0
MONEY = "money"        # amounts >= 0; blank = 0
PERCENT = "percent"    # a share, 36% or 0.36; blank = missing
AMOUNT = "amount"      # a money amount where blank = missing (bids, budgets)
MATCH = "match_type"   # exact, phrase, broad, product, auto
NEG_MATCH = "negative_match_type"  # negative exact, negative phrase
STATE = "state"        # enabled, paused, archived
TARGETING = "targeting"  # manual, automatic

NUMERIC_KINDS = (COUNT, MONEY, PERCENT, AMOUNT)


@dataclass(frozen=True)
class ColumnRule:
    """One canonical column of an input table."""

    name: str
    kind: str
    required: bool = True
    synonyms: tuple[str, ...] = ()


@dataclass(frozen=True)
class TableRule:
    """One input table: its canonical name, columns, and whether the file must exist."""

    name: str
    columns: tuple[ColumnRule, ...]
    required: bool
    label: str

    def column(self, name: str) -> ColumnRule:
        """The column rule called name."""
        return next(c for c in self.columns if c.name == name)


def _c(name: str, kind: str, *synonyms: str, required: bool = True) -> ColumnRule:
    return ColumnRule(name, kind, required, synonyms)


_CAMPAIGN = _c("campaign", TEXT, "campaignname", "campaigntitle")
_AD_GROUP = _c("ad_group", TEXT, "adgroupname", "adset", "group")
_PRODUCT = _c("product_id", TEXT, "sku", "productcode", "itemid", "item", "productsku", "listingid", "product",
              "advertisedsku", "advertisedproduct", "advertisedproductid")
_IMPRESSIONS = _c("impressions", COUNT, "impr", "views", "impression")
_CLICKS = _c("clicks", COUNT, "click")
_SPEND = _c("spend", MONEY, "cost", "adspend", "adcost", "totalspend", "spent", "amountspent")
_AD_SALES = _c("ad_sales", MONEY, "sales", "adrevenue", "attributedsales", "totaladsales", "adsalesamount")
# Never a units column: an order may hold several units, and conversion rates count orders per click.
_ORDERS = _c("orders", COUNT, "adorders", "conversions", "purchases", "totalorders")
_TARGET = _c("target", TEXT, "keyword", "targeting", "keywordortarget", "targetingexpression", "keywordtext")
_MATCH = _c("match_type", MATCH, "match", "matchtype")
_METRICS = (_IMPRESSIONS, _CLICKS, _SPEND, _AD_SALES, _ORDERS)

TABLES: tuple[TableRule, ...] = (
    TableRule("catalog", (
        _PRODUCT,
        _c("product_name", TEXT, "name", "title", "producttitle", "itemname", "description"),
        _c("price", MONEY, "saleprice", "sellingprice", "unitprice", "listprice"),
        _c("unit_cost", MONEY, "cost", "cogs", "costofgoods", "landedcost", "productcost", "unitcogs"),
        _c("fees_per_unit", MONEY, "fees", "feesperunit", "fee", "unitfees", "marketplacefees", "fulfilmentfees",
           "fulfillmentfees"),
        _c("target_acos", PERCENT, "targetacos", "acostarget", required=False),
        _c("margin", PERCENT, "premargin", "marginbeforeads", "grossmargin", required=False),
    ), True, "products, prices and unit costs"),
    TableRule("store_sales", (
        _PRODUCT,
        _c("units", COUNT, "unitsordered", "unitssold", "quantity", "qty"),
        _c("revenue", MONEY, "sales", "totalsales", "grosssales", "salesamount", "productsales"),
    ), True, "all sales per product in the period"),
    TableRule("ad_products", (_CAMPAIGN, _AD_GROUP, _PRODUCT, _c("ad_type", TEXT, "adtype", "adproduct", "type"),
                              *_METRICS), True, "ad results per advertised product"),
    TableRule("targets", (_CAMPAIGN, _AD_GROUP, _TARGET, _MATCH,
                          _c("state", STATE, "status", "targetstate", "keywordstate"),
                          _c("bid", AMOUNT, "maxbid", "currentbid", "keywordbid", "cpcbid"),
                          *_METRICS), False, "ad results per keyword or product target"),
    TableRule("search_terms", (_CAMPAIGN, _AD_GROUP, _TARGET, _MATCH,
                               _c("search_term", TEXT, "customersearchterm", "query", "searchquery", "term"),
                               *_METRICS), False, "ad results per customer search term"),
    TableRule("campaigns", (_CAMPAIGN, _c("ad_type", TEXT, "adtype", "type"),
                            _c("state", STATE, "status", "campaignstate"),
                            _c("daily_budget", AMOUNT, "budget", "dailybudget", "budgetperday"),
                            _c("targeting", TARGETING, "targetingtype", "targetingmode")),
              False, "campaign settings"),
    TableRule("negatives", (_CAMPAIGN, _c("ad_group", TEXT, "adgroupname", required=False),
                            _c("term", TEXT, "keyword", "negativekeyword", "negative", "searchterm", "target"),
                            _c("match_type", NEG_MATCH, "match", "matchtype")),
              False, "negative keywords already in place"),
    # Stock: one row per product, or one per product and location (warehouse), summed per product on Profit.
    TableRule("inventory", (_PRODUCT,
                            _c("units_available", COUNT, "available", "unitsavailable", "availableunits", "onhand",
                               "unitsonhand", "instock", "unitsinstock", "stock", "stocklevel", "sellable",
                               "sellableunits", "quantityavailable", "availablequantity", "availableqty"),
                            _c("units_inbound", COUNT, "inbound", "unitsinbound", "inboundunits", "incoming",
                               "intransit", "unitsintransit", "onorder", "unitsonorder", required=False),
                            _c("lead_time_days", COUNT, "leadtime", "leadtimedays", "restockleadtime", "restockdays",
                               "restocktime", "daystorestock", required=False),
                            _c("location", TEXT, "warehouse", "site", "depot", "fulfilmentcentre",
                               "fulfillmentcenter", "storagelocation", required=False)),
              False, "units in stock per product"),
)

TABLE_BY_NAME = {t.name: t for t in TABLES}

MATCH_TYPES = ("exact", "phrase", "broad", "product", "auto")
_MATCH_SYNONYMS = {
    "exact": "exact", "exactmatch": "exact", "e": "exact",
    "phrase": "phrase", "phrasematch": "phrase", "p": "phrase",
    "broad": "broad", "broadmatch": "broad", "b": "broad",
    "product": "product", "producttarget": "product", "producttargeting": "product", "item": "product",
    "category": "product", "targetingexpression": "product",
    "auto": "auto", "automatic": "auto", "autotargeting": "auto", "automatictargeting": "auto", "-": "auto",
}
_NEG_MATCH_SYNONYMS = {
    "negativeexact": "negative exact", "exact": "negative exact", "negexact": "negative exact",
    "negativephrase": "negative phrase", "phrase": "negative phrase", "negphrase": "negative phrase",
}
_STATE_SYNONYMS = {
    "enabled": "enabled", "enable": "enabled", "active": "enabled", "on": "enabled", "live": "enabled",
    "running": "enabled", "delivering": "enabled",
    "paused": "paused", "pause": "paused", "off": "paused", "inactive": "paused",
    "archived": "archived", "ended": "archived", "deleted": "archived", "removed": "archived",
}
_TARGETING_SYNONYMS = {"manual": "manual", "automatic": "automatic", "auto": "automatic"}

CHOICES = {
    MATCH: (_MATCH_SYNONYMS, "exact, phrase, broad, product or auto"),
    NEG_MATCH: (_NEG_MATCH_SYNONYMS, "negative exact or negative phrase"),
    STATE: (_STATE_SYNONYMS, "enabled, paused or archived"),
    TARGETING: (_TARGETING_SYNONYMS, "manual or automatic"),
}

_NOT_ALNUM = re.compile(r"[^0-9a-z]+")


def header_key(text: str) -> str:
    """A header folded for matching: lower case, letters and digits only."""
    return _NOT_ALNUM.sub("", str(text).casefold())


def file_key(stem: str) -> str:
    """A file's stem folded the same way, for finding a table's file."""
    return header_key(stem)
