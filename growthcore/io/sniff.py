"""What kind of file this is, and how its text is encoded."""

from __future__ import annotations

import codecs
import os

from growthcore.errors import ImportFailure

ZIP_SIGNATURES = (b"PK\x03\x04", b"PK\x05\x06")
OLE_SIGNATURE = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".tab", ".dat")
XLSX_SUFFIXES = (".xlsx", ".xlsm")
#: Share of control characters above which decoded text is taken for binary content.
BINARY_CONTROL_SHARE = 0.01


def suffix(filename: str) -> str:
    return os.path.splitext(filename)[1].lower()


def detect_format(data: bytes, filename: str) -> str:
    """``text`` or ``xlsx``, from the content first and the name second; refuses the rest."""
    ext = suffix(filename)
    if not data:
        raise ImportFailure(f"{filename}: the file is empty")
    if data.startswith(OLE_SIGNATURE):
        if _encrypted_ole(data):
            raise ImportFailure(
                f"{filename}: the workbook is password-protected (encrypted); "
                "save a copy without a password, as .xlsx or CSV, and import that"
            )
        raise ImportFailure(
            f"{filename}: this is an old-style Excel 97-2003 (.xls) or other OLE file, not .xlsx; "
            "save it as .xlsx or CSV and import that"
        )
    if data.startswith(ZIP_SIGNATURES):
        if ext in TEXT_SUFFIXES:
            raise ImportFailure(
                f"{filename}: the file is a zip archive (perhaps a workbook), not text; "
                "name it .xlsx if it is a workbook"
            )
        return "xlsx"
    if ext in XLSX_SUFFIXES:
        raise ImportFailure(
            f"{filename}: not an .xlsx workbook (an .xlsx file is a zip archive and this one is not); "
            "if it is a CSV, name it .csv"
        )
    if ext in (".xls", ".ods", ".numbers"):
        raise ImportFailure(
            f"{filename}: {ext} files are not read; save the sheet as .xlsx or CSV and import that"
        )
    return "text"


def _encrypted_ole(data: bytes) -> bool:
    # Encrypted OOXML packages are OLE files whose directory names the EncryptionInfo stream.
    return "EncryptionInfo".encode("utf-16-le") in data or "EncryptedPackage".encode("utf-16-le") in data


def decode_text(data: bytes, filename: str) -> tuple[str, str, list[str]]:
    """The text, the encoding used, and notes about the choice.

    UTF-8 (with or without byte-order mark) and UTF-16 (with a mark, or recognised from its
    zero bytes) are read as such; anything else falls back to Windows-1252, the Latin-1 superset
    that spreadsheet programs write, and the report says so.
    """
    notes: list[str] = []
    if data.startswith(codecs.BOM_UTF8):
        text, encoding = _decode(data[3:], "utf-8", filename), "utf-8-sig"
    elif data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        encoding = "utf-16-le" if data.startswith(codecs.BOM_UTF16_LE) else "utf-16-be"
        text = _decode(data[2:], encoding, filename)
    elif (guess := _utf16_without_bom(data)) is not None:
        encoding = guess
        text = _decode(data, encoding, filename)
        notes.append(f"read as {encoding} (no byte-order mark; recognised from its zero bytes)")
    else:
        try:
            text, encoding = data.decode("utf-8"), "utf-8"
        except UnicodeDecodeError as exc:
            try:
                text, encoding = data.decode("cp1252"), "cp1252"
            except UnicodeDecodeError:
                text, encoding = data.decode("latin-1"), "latin-1"
            notes.append(
                f"not valid UTF-8 (byte {exc.start + 1} is 0x{data[exc.start]:02x}): read as "
                f"{'Windows-1252' if encoding == 'cp1252' else 'Latin-1'}; check accented letters "
                "in the headers"
            )
    _refuse_binary(text, filename)
    return text, encoding, notes


def _decode(data: bytes, encoding: str, filename: str) -> str:
    try:
        return data.decode(encoding)
    except UnicodeDecodeError as exc:
        raise ImportFailure(
            f"{filename}: the file starts like {encoding} text but byte {exc.start + 1} is not valid "
            f"{encoding}; the file may be damaged"
        ) from None


def _utf16_without_bom(data: bytes) -> str | None:
    sample = data[:4000]
    if len(sample) < 4 or len(sample) % 2:
        return None
    even, odd = sample[0::2], sample[1::2]
    half = len(sample) // 2
    if odd.count(0) > 0.9 * half and even.count(0) < 0.1 * half:
        return "utf-16-le"
    if even.count(0) > 0.9 * half and odd.count(0) < 0.1 * half:
        return "utf-16-be"
    return None


def _refuse_binary(text: str, filename: str) -> None:
    if "\x00" in text:
        raise ImportFailure(f"{filename}: not a spreadsheet: the file holds binary data (zero bytes)")
    sample = text[:100_000]
    controls = sum(1 for ch in sample if (ord(ch) < 32 and ch not in "\t\r\n\f") or 0x7F <= ord(ch) < 0xA0)
    if sample and controls > BINARY_CONTROL_SHARE * len(sample):
        raise ImportFailure(
            f"{filename}: not a spreadsheet: {controls} of the first {len(sample)} characters are "
            "control codes (binary data?)"
        )
