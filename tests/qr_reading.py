"""Reading rendered labels back with tools that are not tracker's own.

zxing-cpp (PyPI) is an independent QR decoder; pypdfium2 (PyPI) and poppler's
pdftoppm rasterise PDFs independently of reportlab, which wrote them. A label
counts as readable only when these read its exact payload back.
"""

from __future__ import annotations

import io
import shutil
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

import pypdfium2
import zxingcpp
from PIL import Image

MM_PER_INCH = 25.4


@dataclass(frozen=True)
class Decoded:
    text: str
    centre_mm: tuple[float, float]  # from the page's top-left corner
    version: str


def decode(image: Image.Image, dpi: float) -> list[Decoded]:
    """Every QR code zxing-cpp finds on the image, with where its centre is, in mm."""
    found = []
    for result in zxingcpp.read_barcodes(
        image, formats=zxingcpp.BarcodeFormats(zxingcpp.BarcodeFormat.QRCode)
    ):
        corners = result.position
        points = (corners.top_left, corners.top_right, corners.bottom_left, corners.bottom_right)
        x = sum(p.x for p in points) / 4 / dpi * MM_PER_INCH
        y = sum(p.y for p in points) / 4 / dpi * MM_PER_INCH
        found.append(Decoded(result.text, (x, y), str(getattr(result, "version", ""))))
    return found


def pdfium_pages(pdf: bytes, dpi: int = 300) -> list[Image.Image]:
    """Rasterise every page with pypdfium2 (PDFium)."""
    document = pypdfium2.PdfDocument(pdf)
    try:
        return [
            document[i].render(scale=dpi / 72).to_pil().convert("L") for i in range(len(document))
        ]
    finally:
        document.close()


def pdftoppm_available() -> bool:
    return shutil.which("pdftoppm") is not None


def pdftoppm_pages(pdf: bytes, dpi: int = 300) -> list[Image.Image]:
    """Rasterise every page with poppler's pdftoppm (apt-get install poppler-utils)."""
    with tempfile.TemporaryDirectory() as folder:
        source = Path(folder) / "labels.pdf"
        source.write_bytes(pdf)
        subprocess.run(
            ["pdftoppm", "-r", str(dpi), "-gray", "-png", str(source), str(Path(folder) / "p")],
            check=True,
            capture_output=True,
        )
        pages = sorted(Path(folder).glob("p*.png"), key=lambda p: int(p.stem.split("-")[-1]))
        return [Image.open(io.BytesIO(page.read_bytes())) for page in pages]
