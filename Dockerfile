# Heft, built and run as compiled JavaScript by a user without privileges; the database lives on a
# volume. Build: docker build -t heft .   Run: docker run -p 8080:8080 -v heft-data:/data heft
FROM node:20-bookworm-slim AS build
WORKDIR /app
# better-sqlite3 compiles when no prebuilt binary fits
RUN apt-get update && apt-get install -y --no-install-recommends python3 make g++ && rm -rf /var/lib/apt/lists/*
COPY package.json package-lock.json ./
RUN npm ci
COPY . .
RUN npm run build && npm prune --omit=dev

FROM node:20-bookworm-slim
WORKDIR /app
ENV NODE_ENV=production HEFT_DB=/data/heft.db HEFT_BACKUP_DIR=/data/backups HEFT_HOST=0.0.0.0 HEFT_PORT=8080
COPY --from=build /app/package.json /app/package-lock.json ./
COPY --from=build /app/node_modules ./node_modules
COPY --from=build /app/dist ./dist
COPY --from=build /app/migrations ./migrations
RUN groupadd --system heft && useradd --system --gid heft --home /data heft && mkdir -p /data && chown heft:heft /data
USER heft
VOLUME /data
EXPOSE 8080
# the compiled server directly: no TypeScript, no build at start
CMD ["node", "dist/node/server/main.js"]
