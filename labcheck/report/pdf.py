"""Printable feedback: a rendered sheet (HTML) to PDF through WeasyPrint, which honours CSS paged media
(page size, repeated table headers, running footers with "page n of N").

Reporting layer: imports nothing of labcheck's.  WeasyPrint is imported only when a PDF is made, so the
rest of labcheck starts without it.  Nothing outside the page is fetched: the sheets inline their CSS,
and every other URL (a student's text cannot make one, but to be sure) is refused.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["html_to_pdf", "PdfError"]


class PdfError(Exception):
    """A PDF could not be made (WeasyPrint or its system libraries are missing)."""


def _refuse(url: str, *args, **kwargs):
    raise ValueError(f"labcheck's PDFs fetch nothing ({url[:60]})")


def html_to_pdf(html: str, path: str | Path) -> int:
    """Write the page ``html`` as a PDF at ``path``; return its number of pages.

    Written beside it as ``<name>.part`` and renamed into place: killed part-way, ``path`` is the whole
    previous PDF or the whole new one, never a cut-off file that looks like a sheet."""
    try:
        import weasyprint
    except (ImportError, OSError) as exc:  # OSError: Pango or HarfBuzz missing from the system
        raise PdfError(f"PDFs need WeasyPrint and its system libraries (Pango): {exc}") from None
    path = Path(path)
    document = weasyprint.HTML(string=html, url_fetcher=_refuse).render()
    part = path.with_name(path.name + ".part")
    try:
        document.write_pdf(str(part))
        part.replace(path)
    except BaseException:
        part.unlink(missing_ok=True)
        raise
    return len(document.pages)
