"""``python -m costcheck.cli`` is the same as the ``costcheck`` command."""

from . import main

raise SystemExit(main())
