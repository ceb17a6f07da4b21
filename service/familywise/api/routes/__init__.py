"""Routers of the service, in the order they appear in the schema."""

from familywise.api.routes import batch, contrasts, families, figures, guidance, health, omnibus

ROUTERS = [
    health.router,
    omnibus.router,
    contrasts.router,
    families.router,
    guidance.router,
    guidance.planning_router,
    batch.router,
    figures.router,
]
