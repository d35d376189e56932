"""The scriptable command line: thin parsers over the core."""
