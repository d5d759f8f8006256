"""firstcycle compute core: transformer energisation physics in SI units.

Pure numeric code (numpy, scipy and a numba-compiled solver kernel). Nothing here imports the
HTTP layer, pydantic, or logging; a test enforces it.
"""
