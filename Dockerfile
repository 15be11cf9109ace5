# mixclock: the settling-time service in a slim Python image, run by a non-root user.
FROM python:3.11-slim

ENV PYTHONDONTWRITEBYTECODE=1 \
    PYTHONUNBUFFERED=1 \
    MIXCLOCK_HOST=0.0.0.0 \
    MIXCLOCK_PORT=8000 \
    MIXCLOCK_WORKERS=2 \
    MIXCLOCK_DATA_DIR=/data

WORKDIR /app
COPY pyproject.toml README.md ./
COPY service ./service
COPY openapi_examples ./openapi_examples
RUN pip install --no-cache-dir -e . \
    && useradd --create-home --uid 10001 mixclock \
    && mkdir -p /data \
    && chown mixclock /data

USER mixclock
VOLUME ["/data"]
EXPOSE 8000
HEALTHCHECK --interval=30s --timeout=3s --start-period=10s --retries=3 \
    CMD ["python", "-c", "import sys, urllib.request; sys.exit(urllib.request.urlopen('http://127.0.0.1:8000/healthz', timeout=2).status != 200)"]
CMD ["mixclock", "serve"]
