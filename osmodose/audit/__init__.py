"""Batch audit of a unit's past orders: a CSV file through the same engine and rules as `check`.

`columns` (the file's columns and header), `reader` (chunks of CSV rows),
`cells` (a chunk's cells read as check reads typed text), `convert` (request
checks on whole columns), `run` (engine and rules per chunk), `output`
(CSV/JSON results) and `summary` (counts and distributions).
"""
