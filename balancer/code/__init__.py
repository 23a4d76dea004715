"""Code demand loads and the feeder and branch-circuit checks (NEC rule sets as data under balancer/rules)."""
