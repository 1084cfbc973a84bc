"""Allow ``python -m tauspec``."""

from .cli.main import main

raise SystemExit(main())
