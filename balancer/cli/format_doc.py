"""Print the input-column and panel-attribute tables of docs/format.md, generated from
balancer/io/columns.py: ``python -m balancer.cli.format_doc`` (a test keeps the document in
step)."""

from __future__ import annotations

from balancer.io.columns import format_panel_table_markdown, format_table_markdown

if __name__ == "__main__":
    print(format_table_markdown())
    print()
    print(format_panel_table_markdown())
