"""Panels in service: the load basis, the trade-off table and the recommended row, the work order."""
