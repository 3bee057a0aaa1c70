"""Errors of the routes file and of the copper it describes."""

from parasite.errors import ParasiteError


class RoutesError(ParasiteError):
    """The routes file is malformed or describes copper that is not valid
    (unknown key, wrong type, non-positive size, pin off its net, ...)."""
