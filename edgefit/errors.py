"""The one exception type for errors a user can cause."""
from __future__ import annotations


class EdgefitError(Exception):
    """A problem with the user's input: a file, an option or a combination of them.

    The message says what was wrong, where (file, line, column when known) and what would
    fix it. The CLI prints ``str(err)`` on one line and exits 2; the REST API answers 4xx with
    ``{"error": {"code": err.code, "message": str(err)}}``.

    Parameters
    ----------
    what : str
        What was wrong, in plain words.
    file : str, optional
        File name (never a full path of the server's).
    line : int, optional
        1-based line number in the file.
    column : str, optional
        Column name or 1-based column number.
    fix : str, optional
        What the user can do about it (an option to set, a value to change).
    code : str
        Short machine-readable code for the REST API (``bad-file``, ``bad-option``, ...).
    """

    def __init__(self, what: str, *, file: str | None = None, line: int | None = None,
                 column: str | int | None = None, fix: str | None = None,
                 code: str = "bad-input"):
        self.what = what
        self.file = file
        self.line = line
        self.column = column
        self.fix = fix
        self.code = code
        super().__init__(self._compose())

    def _compose(self) -> str:
        where = []
        if self.file:
            where.append(str(self.file))
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column {self.column}" if isinstance(self.column, int)
                         else f"column '{self.column}'")
        text = (", ".join(where) + ": " if where else "") + self.what
        if self.fix:
            text += f" (fix: {self.fix})"
        return text
