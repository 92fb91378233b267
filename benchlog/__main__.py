"""Allows `python -m benchlog`."""

from benchlog.cli import main

raise SystemExit(main())
