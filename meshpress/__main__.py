"""``python -m meshpress``: same as the ``meshpress`` command."""

from .cli import main

raise SystemExit(main())
