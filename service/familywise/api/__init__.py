"""The HTTP layer: FastAPI app factory, routes, request and response models."""
