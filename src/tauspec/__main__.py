"""Allow ``python -m tauspec``."""

from .cli import main

raise SystemExit(main())
