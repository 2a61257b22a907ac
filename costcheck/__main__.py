"""``python -m costcheck`` is the same as the ``costcheck`` command."""

from .cli import main

raise SystemExit(main())
