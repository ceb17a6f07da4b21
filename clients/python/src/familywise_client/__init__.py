"""Python client for the familywise service (see clients/python/README.md)."""

__version__ = "0.1.0"
