import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vite';

const web = (path: string) => fileURLToPath(new URL(`./web/${path}`, import.meta.url));

// One entry per page; the server serves dist/web. No inline scripts, so the CSP holds.
export default defineConfig({
  root: web(''),
  base: '/',
  logLevel: 'warn',
  build: {
    outDir: fileURLToPath(new URL('./dist/web', import.meta.url)),
    emptyOutDir: true,
    assetsInlineLimit: 0,
    rollupOptions: {
      input: {
        home: web('index.html'),
        entry: web('entry/index.html'),
        board: web('board/index.html'),
        review: web('review/index.html'),
        setup: web('setup/index.html'),
      },
    },
  },
});
