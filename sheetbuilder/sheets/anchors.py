"""Named anchors: the places in the workbook one sheet's planner provides and other planners read.

An anchor is a name such as ``profit.net_profit`` (a table column's body range), ``profit_total.revenue``
(its totals-row cell), ``terms_last.p_cnt`` (its last body cell) or ``budget.shifted`` (a single
figure with its cached value). The assembler (:mod:`sheetbuilder.assemble`) runs the planners in
order; each step provides its anchors under its own name and reads the ones it needs by name.

Reading an anchor no step provided is a bug in the planning order, never the user's: it raises
:class:`MissingAnchor` (an internal error, exit 70), never a placeholder range. A planner whose
source table may be absent (the Actions list without Bids, the Follow-up without targets) says so
with :func:`without_absent`, which writes the branch that would read it as a blank: the branch is
never taken, its table's count of rows being 0.
"""
from __future__ import annotations

import re
from collections.abc import Iterator, Mapping
from dataclasses import replace
from typing import Any, Iterable

from sheetbuilder.workbook.columns import ColumnDef


class MissingAnchor(KeyError):
    """A planner read an anchor that no earlier planning step provides (an internal error)."""

    def __str__(self) -> str:
        return str(self.args[0]) if self.args else "missing anchor"


class DuplicateAnchor(ValueError):
    """Two planning steps provide the same anchor (an internal error)."""


class Anchors(Mapping):
    """The anchors provided so far: {name: absolute reference}, each with the step that provided it.

    A read-only mapping for the planners (``{rng:name}`` templates resolve through it); only the
    assembler provides anchors.
    """

    def __init__(self) -> None:
        self._refs: dict[str, str] = {}
        self._owners: dict[str, str] = {}
        self._values: dict[str, Any] = {}

    def provide(self, owner: str, refs: Mapping[str, str]) -> None:
        """Add refs ({name: reference}) as provided by the step owner; a name given twice is an error."""
        for name, ref in refs.items():
            if name in self._refs:
                raise DuplicateAnchor(f"the anchor {name} is provided by both {self._owners[name]} and {owner}")
            self._refs[name] = ref
            self._owners[name] = owner

    def provide_cell(self, owner: str, name: str, ref: str, value: Any) -> None:
        """Add one cell anchor with its cached value (a dashboard figure, a count)."""
        self.provide(owner, {name: ref})
        self._values[name] = value

    def value(self, name: str) -> Any:
        """The cached value of a cell anchor."""
        self[name]
        if name not in self._values:
            raise MissingAnchor(f"the anchor {name} has no cached value (provided by {self._owners[name]})")
        return self._values[name]

    def tables(self) -> set[str]:
        """The table prefixes some anchor is provided for ('profit', 'bids', 'targets', ...)."""
        return {name.split(".", 1)[0] for name in self._refs}

    def __getitem__(self, name: str) -> str:
        try:
            return self._refs[name]
        except KeyError:
            raise MissingAnchor(f"no planning step provides the anchor {name}") from None

    def __iter__(self) -> Iterator[str]:
        return iter(self._refs)

    def __len__(self) -> int:
        return len(self._refs)


# A read of one row of an absent table: INDEX(range, row) and MATCH(x, range, type) over {rng:table.column}.
_CALL = re.compile(r"\b(INDEX|MATCH)\(")
_READ_ARG = {"INDEX": 0, "MATCH": 1}  # which argument of the call is the range it reads


def _call_args(formula: str, open_at: int) -> tuple[list[str], int]:
    """The arguments of the call whose parenthesis is at open_at, and the position of its closing one.

    Commas and parentheses inside quoted text or nested calls do not count.
    """
    args, depth, quoted, last = [], 0, False, open_at + 1
    for i in range(open_at, len(formula)):
        c = formula[i]
        if c == '"':
            quoted = not quoted
        elif quoted:
            continue
        elif c == "(":
            depth += 1
        elif c == ")":
            depth -= 1
            if depth == 0:
                return [*args, formula[last:i]], i
        elif c == "," and depth == 1:
            args.append(formula[last:i])
            last = i + 1
    raise ValueError(f"unbalanced parentheses in {formula}")


def _blank_reads(formula: str, absent: set[str]) -> str:
    """formula with every INDEX or MATCH whose range is a table in absent written as ""."""
    out, i = [], 0
    while (m := _CALL.search(formula, i)) is not None:
        args, end = _call_args(formula, m.end() - 1)
        read = args[_READ_ARG[m.group(1)]] if len(args) > _READ_ARG[m.group(1)] else ""
        table = re.fullmatch(r"\{rng:(\w+)\.\w+\}", read.strip())
        out.append(formula[i:m.start()])
        if table is not None and table.group(1) in absent:
            out.append('""')
        else:
            out.append(m.group(0) + _blank_reads(formula[m.end():end], absent) + ")")
        i = end + 1
    return "".join(out) + formula[i:]


def without_absent(defs: Iterable[ColumnDef], anchors: Mapping[str, str], optional: Iterable[str]) -> list[ColumnDef]:
    """defs with each INDEX or MATCH over a table in optional that anchors lack written as a blank ("").

    The planner declares those tables optional: it counts their rows as 0, so the branch is never
    taken. A read of any other missing anchor still fails when the template is resolved.
    """
    absent = set(optional) - {name.split(".", 1)[0] for name in anchors}
    if not absent:
        return list(defs)

    out = []
    for d in defs:
        if d.formula:
            formula = _blank_reads(d.formula, absent)
            d = replace(d, formula=formula) if formula != d.formula else d
        out.append(d)
    return out
