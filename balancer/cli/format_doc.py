"""Print the input-column table of docs/format.md, generated from balancer/io/columns.py:
``python -m balancer.cli.format_doc`` (a test keeps the document in step)."""

from __future__ import annotations

from balancer.io.columns import format_table_markdown

if __name__ == "__main__":
    print(format_table_markdown())
