"""``python -m costcheck.cli`` is the same as the ``costcheck`` command."""

from . import main

if __name__ == "__main__":  # a spawned worker process imports this module too: run nothing then
    raise SystemExit(main())
