"""The weekly round: reading last week's saved workbook, carrying typed values, following up last
week's changes, exporting this week's.
"""
