"""The one error type of the spec layer: it names the file, key, value and what is accepted."""

__all__ = ["SpecError"]


class SpecError(ValueError):
    """Bad input in a model or observation file.

    Attributes
    ----------
    path : str
        The file (or ``"<string>"`` for text given directly).
    key : str
        Dotted key, e.g. ``"ring.einstein_radius_arcsec.sd"`` (empty for
        whole-file problems such as a TOML syntax error).
    value : object
        The offending value (``None`` when missing).
    expected : str
        What would be accepted.
    """

    def __init__(self, path, key, value, expected, problem=None):
        self.path = str(path)
        self.key = key
        self.value = value
        self.expected = expected
        self.problem = problem
        super().__init__(self._message())

    def _message(self) -> str:
        where = f"{self.path}: " + (f"key '{self.key}'" if self.key else "file")
        if self.problem:
            what = self.problem if self.value is None else f"{self.problem} (value {self.value!r})"
        elif self.value is None:
            what = "is missing"
        else:
            what = f"has value {self.value!r}"
        return f"{where} {what}; expected {self.expected}"
