"""The package's one exception type.

Every error a user can cause (a bad value, an unknown name, an unreadable file) is raised as
:class:`BackboneError`, whose message names the offending entry and what is allowed. It is also a
``ValueError`` so generic callers can catch it as such. The CLI turns it into one line on stderr and exit
status 2; physics code raises it and never prints.
"""

__all__ = ["BackboneError"]


class BackboneError(ValueError):
    """A value, name or file the user gave cannot be used; the message says which and what is allowed."""
