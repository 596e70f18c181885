"""What the user reads: figures (returned, not shown), the HTML report and diagnosis.json.

Nothing here computes new numbers; it draws and writes what the diagnosis holds.
"""

from ttvkit.report.writer import render_html, write_report

__all__ = ["write_report", "render_html"]
