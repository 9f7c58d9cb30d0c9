"""Checks shared by the command-line tests."""


def one_error_line(err: str, prefix: str = "bcgen: error: ") -> str:
    """Assert that stderr is one line starting with ``prefix``, no traceback; return it."""
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith(prefix)
    assert "Traceback" not in err
    return lines[0]
