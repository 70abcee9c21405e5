# lostwork server and worker image (used by docker-compose.yml).
FROM python:3.11-slim

ENV PYTHONDONTWRITEBYTECODE=1 PYTHONUNBUFFERED=1 PIP_NO_CACHE_DIR=1
WORKDIR /app

COPY pyproject.toml README.md alembic.ini ./
COPY api ./api
COPY engine ./engine
COPY dashboard ./dashboard
COPY migrations ./migrations
# Editable install: the migrations folder is found next to the api package.
RUN pip install -e . && useradd --system --no-create-home lostwork
USER lostwork

EXPOSE 8000
CMD ["lostwork", "serve", "--host", "0.0.0.0", "--port", "8000"]
