"""A `.py` file's bytes as text and back, keeping its encoding (PEP 263) and BOM."""

from __future__ import annotations

import codecs
import io
import tokenize
from dataclasses import dataclass

from impactscope.rewrite.lines import Lines


@dataclass(frozen=True)
class PyFile:
    encoding: str  # as PEP 263 detection names it ("utf-8-sig" when a BOM is there)
    lines: Lines  # the text after the BOM, its line ends as written

    @classmethod
    def read(cls, data: bytes) -> "PyFile":
        """Raises ValueError (SyntaxError, UnicodeDecodeError, LookupError) on bytes the
        interpreter would refuse too; the scan has counted such a file already."""
        encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)
        body = data[len(codecs.BOM_UTF8):] if encoding == "utf-8-sig" else data
        codec = "utf-8" if encoding == "utf-8-sig" else encoding
        return cls(encoding, Lines.of(body.decode(codec)))

    def encode(self, text: str) -> bytes:
        """`text` in this file's encoding, BOM first if it had one. Raises UnicodeEncodeError
        when the encoding cannot spell a new name (the caller sends the file to review)."""
        if self.encoding == "utf-8-sig":
            return codecs.BOM_UTF8 + text.encode("utf-8")
        return text.encode(self.encoding)
