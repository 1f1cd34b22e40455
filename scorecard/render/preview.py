"""PNG previews of every page, rendered with pypdfium2 (brought by pdfplumber; no system tools needed)."""

from __future__ import annotations

import io
from pathlib import Path

import pypdfium2

from scorecard.errors import UserError
from scorecard.jsondoc import atomic_write_bytes


def write_previews(pdf: bytes, folder: str | Path, stem: str = "page", dpi: int = 110) -> list[Path]:
    """Write `<stem>-01.png`, `<stem>-02.png`, ... into `folder` (created if its parent exists)."""
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise UserError(f"--preview {folder}: is a file; give a folder for the page previews")
    if not folder.exists():
        if not folder.parent.is_dir():
            raise UserError(f"--preview {folder}: folder {folder.parent} does not exist; create it first")
        folder.mkdir()
    document = pypdfium2.PdfDocument(pdf)
    written = []
    try:
        for i in range(len(document)):
            page = document[i]
            image = page.render(scale=dpi / 72).to_pil()
            buffer = io.BytesIO()
            image.save(buffer, format="PNG")
            target = folder / f"{stem}-{i + 1:02d}.png"
            atomic_write_bytes(target, buffer.getvalue())
            written.append(target)
            page.close()
    finally:
        document.close()
    return written
