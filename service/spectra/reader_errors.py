"""The one error every spectrum reader raises: a file that cannot be turned into a spectrum."""

from __future__ import annotations

from service.errors import UnusableInput

ACCEPTED_FORMATS = (
    "JCAMP-DX (IUPAC 4.24 or 5.01, text starting with '##TITLE=') or delimited text "
    "(two columns, wavenumber or wavelength and one value column, separated by comma, semicolon or tab)"
)


class ReaderError(UnusableInput):
    """A file could not be read as a spectrum; the message says what is wrong and what to do.

    Every reader in :mod:`service.spectra` raises only this for bad input, whatever the bytes.
    """

    code = "unreadable-spectrum-file"
    title = "Spectrum file cannot be read"


class CompoundFileError(ReaderError):
    """A JCAMP-DX file holds several blocks where one spectrum was asked for.

    ``blocks`` lists ``(index, title, reason it cannot be read or None)`` for each block, so a
    caller can offer the choice (e.g. ``bandgate inspect --block N``).
    """

    def __init__(self, message: str, *, blocks: list[tuple[int, str, str | None]]) -> None:
        super().__init__(message)
        self.blocks = blocks
