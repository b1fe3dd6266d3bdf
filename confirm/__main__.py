"""Allow ``python -m confirm``."""

try:
    from confirm.cli import run
except KeyboardInterrupt:  # Ctrl-C while the modules load: end as the command line would
    raise SystemExit(130) from None

run()
