"""The command line: typer commands that parse options, call one service function and hand
its result to a renderer. This package is the only place that prints."""
