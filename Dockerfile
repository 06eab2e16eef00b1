# syntax=docker/dockerfile:1
# One image for the coordinator and the workers: `docker run IMAGE coordinator ...` or
# `docker run IMAGE worker ...` (README.md, "Beyond one machine"). Build it from the repository's
# root: docker build -t roundwire:0.1.0 .

# Build stage: every dependency, then the TypeScript build into dist/.
FROM node:20.19-bookworm-slim AS build
WORKDIR /build
COPY package.json package-lock.json ./
# No install scripts, as package.json's allowScripts has it for msgpackr-extract and bufferutil;
# the prepare script (tsc) would run before the sources are here, so the build is its own step.
RUN npm ci --ignore-scripts --no-audit --no-fund
COPY tsconfig.json ./
COPY src ./src
COPY runtime ./runtime
COPY server ./server
COPY client ./client
RUN npx tsc -p tsconfig.json

# Run stage: production dependencies only, the compiled output, and no root.
FROM node:20.19-bookworm-slim AS run
ENV NODE_ENV=production \
    ROUNDWIRE_CACHE_DIR=/var/cache/roundwire
WORKDIR /opt/roundwire
COPY package.json package-lock.json ./
RUN npm ci --omit=dev --ignore-scripts --no-audit --no-fund && npm cache clean --force
COPY --from=build /build/dist/src ./dist/src
COPY --from=build /build/dist/runtime ./dist/runtime
COPY --from=build /build/dist/server ./dist/server
COPY --from=build /build/dist/client ./dist/client
COPY bin ./bin
COPY scenarios ./scenarios
# results/ is where a run writes by default (mount a volume there to keep it); the oracle's cache
# goes to ROUNDWIRE_CACHE_DIR. Both belong to the user the processes run as.
RUN ln -s /opt/roundwire/bin/roundwire.js /usr/local/bin/roundwire \
 && mkdir -p /opt/roundwire/results /var/cache/roundwire \
 && chown 1000:1000 /opt/roundwire/results /var/cache/roundwire
# The base image's `node` user, by number: Kubernetes' runAsNonRoot can check a number, not a name.
USER 1000:1000
# The coordinator's rounds, its metrics, a worker's metrics (as deploy/kubernetes uses them).
EXPOSE 7070 9464 9465
ENTRYPOINT ["roundwire"]
CMD ["--help"]
