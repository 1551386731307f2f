"""``python -m kit``: the same entry point as the ``sweepbook`` command."""

from kit.batch.cli import main

raise SystemExit(main())
