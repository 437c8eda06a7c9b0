# Three stages (untested here: no Docker engine on the machines this was written on).
#   docker build -t netbreeder .                           coordinator image (the default, last stage);
#                                                          it holds the whole CLI, `worker` included
#   docker build --target worker -t netbreeder-worker .    slim worker image: the packed worker alone,
#                                                          no coordinator, no compiler, no native build

# build: install everything, compile every workspace into dist/ (the coordinator's `prepare` runs
# `tsc -b` during npm ci) and pack shared-types and worker as a release would.
FROM node:20-bookworm-slim AS build
# better-sqlite3 (coordinator only) compiles from source when no prebuilt binary can be fetched.
RUN apt-get update \
 && apt-get install -y --no-install-recommends python3 make g++ \
 && rm -rf /var/lib/apt/lists/*
WORKDIR /app
COPY package.json package-lock.json tsconfig.base.json tsconfig.build.json run-file.schema.json ./
COPY shared-types shared-types
COPY worker worker
COPY coordinator coordinator
COPY tests/package.json tests/
RUN npm ci --no-audit --no-fund
RUN npm pack --workspace shared-types --workspace worker --pack-destination /packs \
 && npm prune --omit=dev --no-audit --no-fund

# worker: the two tarballs and their production dependencies; the optional native TensorFlow
# backend is left out (training runs on the wasm backend) and no install script runs.
FROM node:20-bookworm-slim AS worker
WORKDIR /app
COPY --from=build /packs /packs
RUN echo '{"name":"netbreeder-worker-image","private":true}' > package.json \
 && npm install --omit=dev --omit=optional --ignore-scripts --no-audit --no-fund /packs/*.tgz \
 && rm -rf /packs /root/.npm
ENV NODE_ENV=production
# Arguments are the worker's own: docker run netbreeder-worker --coordinator http://HOST:7460 --redis redis://HOST:6379
ENTRYPOINT ["node", "node_modules/@netbreeder/worker/dist/cli.js"]
CMD ["--help"]

# coordinator (default): the built checkout without its development dependencies.
FROM node:20-bookworm-slim
WORKDIR /app
COPY --from=build /app /app
COPY examples examples
ENV NODE_ENV=production
ENTRYPOINT ["node", "coordinator/dist/cli/main.js"]
CMD ["--help"]
