"""Allow `python -m linewatch`."""

from linewatch.cli.main import main

raise SystemExit(main())
