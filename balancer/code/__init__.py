"""Code demand loads and the feeder and branch-circuit checks (rule sets as data in rules/)."""
