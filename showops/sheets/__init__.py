"""PDFs rendered from the pure data of the other packages (render only, no queries).

- :func:`render_crew_sheet` (``crew``): the per-performance crew sheet.
- ``common``: page template, styles, footer, caution block, limit bars, QR codes and
  tick boxes, shared by every report (see DEVELOPERS.md "How to add a report").
"""

from showops.sheets.crew import live_url, render_crew_sheet

__all__ = ["live_url", "render_crew_sheet"]
