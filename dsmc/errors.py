"""User-facing error types.

A :class:`UserError` is a mistake in what the user gave us (a case file, a
command-line argument, a gas name, a result file).  The CLI prints its message
on one line and exits with status 2; it never shows a traceback.  Anything
else that escapes is a bug and keeps its traceback.
"""

from __future__ import annotations

import difflib


class UserError(Exception):
    """A problem with user input; the message is one line and names the culprit."""

    exit_code = 2


class CaseError(UserError):
    """An invalid case file: message reads ``FILE: key.path: what is wrong``."""


class UnknownNameError(UserError, KeyError):
    """A name (species, model, wall kind) not present in a registry."""

    def __str__(self) -> str:  # KeyError would otherwise quote the message
        return str(self.args[0]) if self.args else ""


def nearest(word: str, choices) -> str:
    """Return ``" (did you mean 'x'?)"`` for the closest choice, or ``""``."""
    match = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f" (did you mean '{match[0]}'?)" if match else ""
