"""The ``tessera`` command line: one dispatcher (:mod:`app.cli.main`), one module per
subcommand, the shared argument groups and the progress display."""
