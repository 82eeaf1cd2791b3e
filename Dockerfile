# One image for the API and the workers of docker-compose.yml.
FROM python:3.11-slim
# gmsh's wheel needs these shared libraries even without a display
RUN apt-get update && apt-get install -y --no-install-recommends libglu1-mesa libxrender1 libxcursor1 libxft2 \
        libxinerama1 libgomp1 && rm -rf /var/lib/apt/lists/*
WORKDIR /src
# The dependencies first, from pyproject.toml alone: this layer is rebuilt only when they change, not on every edit
COPY pyproject.toml .
RUN python -c 'import tomllib; print("\n".join(tomllib.load(open("pyproject.toml", "rb"))["project"]["dependencies"]))' \
        > /tmp/requirements.txt && pip install --no-cache-dir -r /tmp/requirements.txt
COPY . .
# a normal (not editable) install: the page ships inside the package; the source folder is not needed afterwards
RUN pip install --no-cache-dir --no-deps . && cd / && rm -rf /src
WORKDIR /
RUN useradd --create-home wakeyard && mkdir /data && chown wakeyard /data
USER wakeyard
ENV WAKEYARD_DATA_DIR=/data
