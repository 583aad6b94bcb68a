"""Reports: console, JSON, workbook, Markdown, CSV, plots and the choose outputs, and the one
atomic, no-replace file writer that every command uses.

Reports read results and never compute an uncertainty (rounding for a statement is formatting).
They may import results, the engine's result types and rounding, and choice results.
"""
