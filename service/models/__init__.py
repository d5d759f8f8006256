"""Pydantic request/response models, one module per operation family."""
