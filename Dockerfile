# One image for the API and the workers of docker-compose.yml.
FROM python:3.11-slim
# gmsh's wheel needs these shared libraries even without a display
RUN apt-get update && apt-get install -y --no-install-recommends libglu1-mesa libxrender1 libxcursor1 libxft2 \
        libxinerama1 libgomp1 && rm -rf /var/lib/apt/lists/*
WORKDIR /app
COPY . .
# editable, so that api/ finds the page in /app/web (web/ is not package data)
RUN pip install --no-cache-dir -e .
RUN useradd --create-home wakeyard && mkdir /data && chown wakeyard /data
USER wakeyard
ENV WAKEYARD_DATA_DIR=/data
