"""``python -m kit`` is the ``frontshift`` command."""

from kit.cli import main

raise SystemExit(main())
