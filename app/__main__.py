"""``python -m app``: the ``tessera`` command."""
from app.cli.main import console_main

console_main()
