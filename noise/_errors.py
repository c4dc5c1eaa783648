"""The structured error of bad arguments, shared by every layer.

A validator that refuses a value raises :class:`ArgumentError`, a ``ValueError`` that
also carries the *name* of the argument it refuses (``argument``) and the rule in the
form ``got <value>; expected <what>`` (``rule``). A caller that knows where the value
came from (the spec parser knows ``rep`` is ``observable.rep``) reports the rule on its
own key path from ``argument``, never by reading the message text. It lives in this
layer because it is the lowest one (``discretize`` and ``holonomy`` both raise it).
"""

from __future__ import annotations

__all__ = ["ArgumentError", "ArgumentTypeError"]


class ArgumentError(ValueError):
    """A refused argument: ``argument`` is its name, ``rule`` what was expected.

    Parameters
    ----------
    argument : str
        The argument's name as the function spells it (``"rep"``, ``"moves"``).
    rule : str
        ``"got <value>; expected <what>"``: what a caller shows after its own key path.
    message : str, optional
        The full message (default: ```argument`: rule``).
    """

    def __init__(self, argument: str, rule: str, message: str | None = None):
        self.argument = argument
        self.rule = rule
        super().__init__(message if message is not None else f"`{argument}`: {rule}")


class ArgumentTypeError(ArgumentError, TypeError):
    """A refused argument of the wrong type (a string for a count, None for a number).

    An :class:`ArgumentError` (so it carries ``argument`` and ``rule``) that is also a
    ``TypeError``, the class Python gives to a value of the wrong type: a caller that
    catches either sees it.
    """
