"""sheetbuilder: marketplace sales and sponsored-ad exports in, a live, verified formula workbook out.

The public surface is :func:`build` (read, plan, render atomically) and
:func:`plan_workbook` (the plan without writing anything).
"""
from sheetbuilder.pipeline import BuildResult, build, plan_workbook
from sheetbuilder.version import __version__

__all__ = ["build", "plan_workbook", "BuildResult", "__version__"]
