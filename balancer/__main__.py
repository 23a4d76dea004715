"""``python -m balancer``."""

from balancer.cli import main

raise SystemExit(main())
