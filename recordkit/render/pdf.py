"""HTML sheets to PDF with WeasyPrint (HTML + CSS paged media; no browser needed)."""
from __future__ import annotations

import logging
from pathlib import Path


def write_pdf(html: str, out: Path) -> None:
    import weasyprint  # imported here: it is slow to load and only this command needs it

    logging.getLogger("weasyprint").setLevel(logging.ERROR)  # font-fallback chatter is not the user's concern
    logging.getLogger("fontTools").setLevel(logging.ERROR)
    weasyprint.HTML(string=html).write_pdf(str(out))
