"""The domain: immutable panels and circuits, space geometry, voltage systems, and what a balancing run asks for and returns."""
