# ridgeflank container image: the page is bundled with Node, the binary is built with cgo against
# Debian 12's GDAL/PROJ, and the runtime image carries only the shared libraries it links (GDAL's
# libcurl serves /vsis3/ for grids in an object store) and curl for the health check. It runs as
# the unprivileged user ridgeflank; grids live in --data or, for several replicas, in a bucket
# (--grid-store s3://bucket/prefix, see deploy/README.md).
FROM node:20-bookworm-slim AS web
WORKDIR /src/web
COPY web/package.json web/package-lock.json ./
RUN npm ci --no-audit --no-fund
COPY web/ ./
RUN npm run build

FROM golang:1.26-bookworm AS build
RUN apt-get update && apt-get install -y --no-install-recommends libgdal-dev libproj-dev pkg-config \
    && rm -rf /var/lib/apt/lists/*
WORKDIR /src
COPY go.mod go.sum ./
RUN go mod download
COPY . .
COPY --from=web /src/web/dist ./web/dist
ARG VERSION=container
RUN go build -ldflags "-X main.version=${VERSION}" -o /out/ridgeflank ./cmd/ridgeflank

FROM debian:bookworm-slim
RUN apt-get update && apt-get install -y --no-install-recommends libgdal32 ca-certificates curl \
    && rm -rf /var/lib/apt/lists/* \
    && groupadd --system --gid 10001 ridgeflank \
    && useradd --system --uid 10001 --gid 10001 --home /var/lib/ridgeflank ridgeflank \
    && mkdir -p /var/lib/ridgeflank && chown ridgeflank /var/lib/ridgeflank
COPY --from=build /out/ridgeflank /usr/local/bin/ridgeflank
# A numeric user, so that Kubernetes can verify runAsNonRoot.
USER 10001:10001
EXPOSE 8080
ENV RIDGEFLANK_DATA=/var/lib/ridgeflank
# /healthz answers while the process serves; /readyz (database and migrations) is for the
# orchestrator's readiness probe.
HEALTHCHECK --interval=30s --timeout=5s --start-period=60s --retries=3 \
    CMD curl -fsS -o /dev/null http://127.0.0.1:8080/healthz || exit 1
ENTRYPOINT ["/usr/local/bin/ridgeflank"]
CMD ["serve", "--addr", "0.0.0.0:8080"]
