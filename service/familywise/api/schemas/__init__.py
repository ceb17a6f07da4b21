"""Pydantic request and response models, one module per endpoint family."""
