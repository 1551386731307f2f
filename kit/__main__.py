"""``python -m kit``: the same entry point as the ``sweepbook`` command."""

from .cli import main

raise SystemExit(main())
