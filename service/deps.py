"""FastAPI dependencies every router shares, declared once."""

from __future__ import annotations

from typing import Annotated

from fastapi import Depends

from service.settings import Settings, settings_dependency

#: The process-wide settings as a handler parameter: ``settings: SettingsDep``.
SettingsDep = Annotated[Settings, Depends(settings_dependency)]
