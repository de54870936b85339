"""Photographs of a specimen's condition: which files tracker keeps, and how large.

A photograph is evidence for the lender, kept whole (by its SHA-256) and shown in the
return report as a thumbnail. Its pixels, not its bytes, are what decoding costs: a
well-compressed file of a few megabytes can declare hundreds of megapixels. The size is
read from the image's header and refused before any pixel is decoded.
"""

from __future__ import annotations

PHOTO_FORMATS = ("JPEG", "PNG", "TIFF", "WEBP")  # Pillow's names for the formats kept
# Real specimen photographs are at most about 50 megapixels; 61-megapixel full-frame
# cameras exist (from memory). The cap sits above them and below the 89,478,485 pixels at
# which Pillow starts warning of a decompression bomb (its MAX_IMAGE_PIXELS, read from
# the installed Pillow), so a photograph tracker keeps never trips that warning.
MAX_PHOTO_PIXELS = 80_000_000


def photo_pixels_problem(width: int, height: int) -> str | None:
    """Why a photograph of this size is not kept (the cap, with its own size), or None."""
    pixels = width * height
    if pixels <= MAX_PHOTO_PIXELS:
        return None
    return (
        f"is {width:,} × {height:,} = {pixels:,} pixels; photographs are capped at "
        f"{MAX_PHOTO_PIXELS:,} pixels: keep a smaller copy (about 50 megapixels is plenty)"
    )
