"""Python client for the familywise service (see clients/python/README.md).

    from familywise_client import Client

    with Client("http://127.0.0.1:8000") as client:
        result = client.pairwise(groups={"reference buffer": [41.2, 43.8, 42.5], "HEPES pH 7.5": [48.7, 50.2, 49.5],
                                         "citrate pH 6.0": [38.4, 39.9, 37.6]})
        print(result.summary, result.letters)
"""

__version__ = "0.1.0"

from familywise_client import models
from familywise_client._retry import RetryPolicy
from familywise_client.client import AsyncClient, Client
from familywise_client.errors import FamilywiseConnectionError, FamilywiseError

__all__ = [
    "AsyncClient",
    "Client",
    "FamilywiseConnectionError",
    "FamilywiseError",
    "RetryPolicy",
    "__version__",
    "models",
]
