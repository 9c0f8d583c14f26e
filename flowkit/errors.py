"""Exception and warning types raised by flowkit.

Every error message names the argument at fault and says how to fix it.
"""


class FlowkitError(ValueError):
    """Bad input to a flowkit function or command (names the argument and the fix)."""


class FlowDefinitionError(FlowkitError):
    """A user-supplied flow cannot be compiled or evaluated."""


class FlowkitNotice(UserWarning):
    """Something the user should know about a result (e.g. how a gradient was obtained)."""
