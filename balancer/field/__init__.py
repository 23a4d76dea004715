"""Panels in service: the load basis, the trade-off table and recommended row, the work order."""
