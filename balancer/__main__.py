"""``python -m balancer``."""

from balancer.cli.main import main

raise SystemExit(main())
