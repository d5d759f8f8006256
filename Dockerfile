# firstcycle service image: build wheels in one stage, run as a non-root user in a slim one.
FROM python:3.11-slim-bookworm AS build
WORKDIR /src
COPY pyproject.toml README.md LICENSE ./
COPY core ./core
COPY service ./service
RUN pip install --no-cache-dir --upgrade pip \
 && pip wheel --no-cache-dir --wheel-dir /wheels .

FROM python:3.11-slim-bookworm
# NUMBA_CACHE_DIR: the compiled kernels, written below at build time into the image, in a
# directory the service's user owns (numba uses a cache directory only if it can write to it).
ENV PYTHONDONTWRITEBYTECODE=1 \
    PYTHONUNBUFFERED=1 \
    OMP_NUM_THREADS=1 \
    MALLOC_ARENA_MAX=2 \
    NUMBA_CACHE_DIR=/home/firstcycle/numba-cache \
    FIRSTCYCLE_HOST=0.0.0.0 \
    FIRSTCYCLE_PORT=8000
COPY --from=build /wheels /wheels
RUN pip install --no-cache-dir /wheels/*.whl && rm -rf /wheels \
 && useradd --create-home --uid 10001 firstcycle
USER firstcycle
# Compile every kernel now, so a new container loads them instead of compiling (about 1 s
# instead of a minute). numba keys its cache on the CPU: on a host whose CPU differs from the
# build machine's, the kernels compile once at start (before /readyz says ready). See README.
RUN firstcycle warmup
EXPOSE 8000
# healthy = ready: /readyz answers 200 once the kernels are loaded (liveness alone: /healthz)
HEALTHCHECK --interval=30s --timeout=5s --start-period=120s \
  CMD ["python", "-c", "import urllib.request,sys; sys.exit(urllib.request.urlopen('http://127.0.0.1:8000/readyz', timeout=4).status != 200)"]
CMD ["firstcycle", "serve", "--host", "0.0.0.0", "--port", "8000"]
