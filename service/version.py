"""Version of the API contract (``info.version`` of openapi/v1/openapi.json)."""

API_VERSION = "1.0.0"
