"""Allow ``python -m workbench``."""

from workbench.cli import main

# Guarded: Dask's LocalCluster starts workers by spawning, which imports this
# module again as ``__mp_main__``; the CLI must not run a second time there.
if __name__ == "__main__":
    raise SystemExit(main())
