"""familywise: which groups of a one-way experiment differ, with what error-rate guarantee."""

__version__ = "0.1.0"
