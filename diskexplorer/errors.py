"""The project's exception hierarchy.

Every error a user can provoke derives from :class:`DiskExplorerError`; the two
common kinds are also ``ValueError`` so that generic callers can catch them.
"""

__all__ = ["DiskExplorerError", "ParameterError", "DataError", "DustError", "SeedError"]


class DiskExplorerError(Exception):
    """Base class of every error raised by diskexplorer on bad input."""


class ParameterError(DiskExplorerError, ValueError):
    """A model parameter is outside its allowed range or inconsistent with another."""


class DataError(DiskExplorerError, ValueError):
    """An input file or table is malformed; the message names file, table and defect."""


class DustError(DiskExplorerError, ValueError):
    """Optical constants, opacity tables or a dust mixture are unusable."""


class SeedError(DiskExplorerError, ValueError):
    """A starting-point document is malformed; the message names the offending entry."""
