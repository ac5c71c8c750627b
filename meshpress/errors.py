"""Errors that mean "the user's input is wrong", as opposed to a bug.

The CLI turns an :class:`InputError` into one line ``meshpress: error: ...`` on
stderr and exit status 2; anything else is a bug and keeps its traceback.
"""


class InputError(ValueError):
    """A user's file, option or value is wrong; the message says what and where."""


class MeshpressWarning(UserWarning):
    """A doubtful input or result that the user should read about."""
