"""Routers of the service, in the order they appear in the schema."""

from familywise.api.routes import health, omnibus

ROUTERS = [health.router, omnibus.router]
