class CalcError(ValueError):
    """A computation cannot proceed with these inputs; the message says why, in plain words."""
