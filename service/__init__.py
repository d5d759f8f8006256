"""firstcycle HTTP layer: FastAPI app, request/response models, problem documents, CLI."""
