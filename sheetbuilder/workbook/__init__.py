"""The workbook: the sheet specification, column definitions and formula text, the palette, the one
renderer, and writing files atomically.
"""
