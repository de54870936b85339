"""The bytes of files a lab hands to tracker, built in the test (everything invented).

Shared by the tests that need many rows of a plain, valid file: growth, crashes, busy
writers. Each builder is deterministic, so the same call gives the same bytes.
"""

from __future__ import annotations


def _csv(lines: list[str]) -> bytes:
    return ("\n".join(lines) + "\n").encode()


def batch_sheet(columns: int) -> bytes:
    """A column batch sheet for element Ca: reference material RM-A on odd slots (10 µg
    loaded), procedural blanks on even ones, each cut's recovery growing with the slot."""
    lines = ["slot,kind,item,loaded,Ca"]
    for slot in range(1, columns + 1):
        if slot % 2:
            lines.append(f"{slot},reference,RM-A,10 ug,{slot / 1000:.3f} ug")
        else:
            lines.append(f"{slot},blank,,,{slot / 1000:.3f} ug")
    return _csv(lines)


def lender_list(rows: int, catalog_prefix: str = "") -> bytes:
    """A lender's list of invented specimens in Darwin Core terms (TDWG), catalogue numbers
    ``INV <prefix><n>``."""
    lines = ["catalogNumber,scientificName,preparations,locality,eventDate,decimalLatitude"]
    lines += [
        f"INV {catalog_prefix}{n},Lamniformes indet.,tooth,Pit {n % 40} (invented),1991-05-03,"
        f"{-38.5 - n / 100_000:.5f}"
        for n in range(rows)
    ]
    return _csv(lines)
