# ridgeflank container image: the page is bundled with Node, the binary is built with cgo against
# Debian 12's GDAL/PROJ, and the runtime image carries only the shared libraries it links.
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
RUN apt-get update && apt-get install -y --no-install-recommends libgdal32 ca-certificates \
    && rm -rf /var/lib/apt/lists/* && useradd --system --home /var/lib/ridgeflank ridgeflank \
    && mkdir -p /var/lib/ridgeflank && chown ridgeflank /var/lib/ridgeflank
COPY --from=build /out/ridgeflank /usr/local/bin/ridgeflank
USER ridgeflank
EXPOSE 8080
ENV RIDGEFLANK_DATA=/var/lib/ridgeflank
ENTRYPOINT ["/usr/local/bin/ridgeflank"]
CMD ["serve", "--addr", "0.0.0.0:8080"]
