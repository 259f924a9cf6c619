"""A simulated market on which the workbook's bid method is compared with a seller's manual rule.

Outside the library: it drives sheetbuilder the way a user does (exports written each week,
then read and planned by the package) and measures what following each policy brings.
"""
