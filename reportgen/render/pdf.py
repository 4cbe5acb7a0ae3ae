"""HTML to PDF with WeasyPrint, reproducibly and without reaching outside the build.

The URL fetcher serves only files inside the folder being rendered; any
other URL (http:, file: elsewhere, data: beyond images) is refused. PDF
identifiers and dates come from the content, not the clock.
"""

from __future__ import annotations

import hashlib
from pathlib import Path
from urllib.parse import unquote, urlparse

import logging


class FetchRefused(ValueError):
    pass


MIME = {".svg": "image/svg+xml", ".css": "text/css", ".png": "image/png", ".jpg": "image/jpeg",
        ".jpeg": "image/jpeg", ".woff2": "font/woff2"}


def _resolve(root: Path, url: str) -> tuple[Path, str]:
    parsed = urlparse(url)
    if parsed.scheme != "file":
        raise FetchRefused(f"refused to fetch {url!r}: only files of the build are used")
    path = Path(unquote(parsed.path)).resolve()
    if root != path and root not in path.parents:
        raise FetchRefused(f"refused to fetch {url!r}: outside the build folder")
    return path, MIME.get(path.suffix.lower(), "application/octet-stream")


def _fetcher(root: Path):
    """A URL fetcher confined to ``root``, for the WeasyPrint version installed."""
    import weasyprint

    root = root.resolve()
    base = getattr(weasyprint, "URLFetcher", None)
    if base is not None and hasattr(base, "fetch"):  # WeasyPrint 68 and later
        from weasyprint.urls import URLFetcherResponse

        class Confined(base):
            def fetch(self, url, headers=None):
                path, mime = _resolve(root, url)
                return URLFetcherResponse(url, path.read_bytes(), {"Content-Type": mime})

        return Confined(allowed_protocols=("file",))

    def fetch(url: str, *args, **kwargs):  # older WeasyPrint: a callable returning a dict
        path, mime = _resolve(root, url)
        return {"string": path.read_bytes(), "mime_type": mime, "redirected_url": url}

    return fetch


def write_pdf(html: str, base_dir: Path, out: Path, *, title: str, date_iso: str, variant: str | None = None) -> None:
    """Render ``html`` (whose relative links resolve in ``base_dir``) to ``out``."""
    import weasyprint

    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    logging.getLogger("fontTools").setLevel(logging.ERROR)
    doc = weasyprint.HTML(string=html, base_url=base_dir.resolve().as_uri() + "/",
                          url_fetcher=_fetcher(base_dir))
    ident = hashlib.sha256(html.encode("utf-8")).hexdigest()[:32].encode()
    kwargs = {"uncompressed_pdf": False, "custom_metadata": False}
    if variant:
        kwargs["pdf_variant"] = variant
    document = doc.render()
    document.metadata.title = title
    document.metadata.authors = []
    document.metadata.created = date_iso
    document.metadata.modified = date_iso
    document.metadata.generator = "reportgen"
    document.write_pdf(out, pdf_identifier=ident, **kwargs)
