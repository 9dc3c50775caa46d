"""Allow ``python -m workbench``."""

from workbench.cli import main

raise SystemExit(main())
