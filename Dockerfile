# The service on a slim Python, as an unprivileged user. The wheel carries the
# rules/ tables and openapi.yaml inside the package.
FROM python:3.11-slim

ENV PYTHONDONTWRITEBYTECODE=1 PYTHONUNBUFFERED=1 PIP_NO_CACHE_DIR=1
WORKDIR /srv/cleaner
COPY pyproject.toml constraints.txt README.md openapi.yaml ./
COPY cleaner ./cleaner
COPY rules ./rules
RUN pip install --disable-pip-version-check -c constraints.txt . \
    && rm -rf /srv/cleaner/* \
    && useradd --system --uid 10001 --no-create-home cleaner

USER cleaner
EXPOSE 8080
HEALTHCHECK --interval=30s --timeout=3s --start-period=10s --retries=3 \
    CMD ["python", "-c", "import urllib.request; urllib.request.urlopen('http://127.0.0.1:8080/healthz', timeout=2)"]
# `cleaner serve` runs gunicorn in this process (PID 1): SIGTERM stops it gracefully.
ENTRYPOINT ["cleaner", "serve", "--host", "0.0.0.0", "--port", "8080"]
