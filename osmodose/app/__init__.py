"""The bedside terminal app: the only place textual is imported.

`launch.launch` loads the formulary first (a bad file stops here, before any
dosing) and only then imports textual.  The app parses typed text with
`osmodose.case.inputs`, runs `osmodose.check.run_check` and shows the result: it
holds no arithmetic of its own.
"""
