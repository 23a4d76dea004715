"""Searches over line assignments: quick answers, starts for the solver, and proofs where the
arithmetic allows.

``baselines`` (greedy, Karmarkar–Karp), ``lines`` (the phase sums and room they share),
``local`` (single and paired changes, undoing needless ones), ``split`` (meet in the middle over
many units) and ``fewest`` (the fewest changes within a spread cap, proven).
"""
