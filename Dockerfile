# firstcycle service image: build wheels in one stage, run as a non-root user in a slim one.
FROM python:3.11-slim-bookworm AS build
WORKDIR /src
COPY pyproject.toml README.md LICENSE ./
COPY core ./core
COPY service ./service
RUN pip install --no-cache-dir --upgrade pip \
 && pip wheel --no-cache-dir --wheel-dir /wheels .

FROM python:3.11-slim-bookworm
ENV PYTHONDONTWRITEBYTECODE=1 \
    PYTHONUNBUFFERED=1 \
    OMP_NUM_THREADS=1 \
    NUMBA_CACHE_DIR=/tmp/numba-cache \
    FIRSTCYCLE_HOST=0.0.0.0 \
    FIRSTCYCLE_PORT=8000
COPY --from=build /wheels /wheels
RUN pip install --no-cache-dir /wheels/*.whl && rm -rf /wheels \
 && useradd --create-home --uid 10001 firstcycle
USER firstcycle
EXPOSE 8000
HEALTHCHECK --interval=30s --timeout=5s --start-period=30s \
  CMD ["python", "-c", "import urllib.request,sys; sys.exit(urllib.request.urlopen('http://127.0.0.1:8000/healthz', timeout=4).status != 200)"]
CMD ["firstcycle", "serve", "--host", "0.0.0.0", "--port", "8000"]
