"""The check: the engine over columns of cases, the rule table, judging, results and the one report.

`osmodose.check.run.run_check` is the single-case entry point; the audit runs the same engine and rules
over whole columns.  Importing this package imports nothing heavy: callers import the module they need.
"""
