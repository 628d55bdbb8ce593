"""``python -m clusterdesk``: the same as the ``clusterdesk`` command."""

from .cli import main

raise SystemExit(main())
