"""Allow ``python -m sampled``."""

from sampled.cli import main

raise SystemExit(main())
