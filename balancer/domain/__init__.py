"""The domain: panels, circuits, space geometry, voltage systems, and balancing runs' options and
results."""
