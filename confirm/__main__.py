"""Allow ``python -m confirm``."""

from confirm.cli import run

run()
