# One image for both roles: `coordinator` and `worker` are commands of the same CLI.
FROM node:20-bookworm-slim
RUN apt-get update \
 && apt-get install -y --no-install-recommends python3 make g++ \
 && rm -rf /var/lib/apt/lists/*
WORKDIR /app
COPY package.json package-lock.json ./
COPY shared-types/package.json shared-types/
COPY worker/package.json worker/
COPY coordinator/package.json coordinator/
COPY tests/package.json tests/
RUN npm ci --omit=dev --no-audit --no-fund
COPY shared-types shared-types
COPY worker worker
COPY coordinator coordinator
COPY examples examples
ENV NODE_ENV=production
ENTRYPOINT ["node", "--import", "tsx", "coordinator/src/cli/main.ts"]
CMD ["--help"]
