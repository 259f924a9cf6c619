"""Reading the exports: the input contract, the guard, numbers, encodings, headers, dates and totals
rows, the readers, the settings file and `inspect`.
"""
