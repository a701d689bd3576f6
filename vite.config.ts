import { defineConfig } from 'vite';

// The page lives in client/ and is built into dist/client, which the server serves.
export default defineConfig({
  root: 'client',
  base: './',
  build: {
    outDir: '../dist/client',
    emptyOutDir: true,
    // No inline scripts or styles: the Content-Security-Policy allows only the page's own files.
    assetsInlineLimit: 0,
    modulePreload: { polyfill: false },
  },
  server: { port: 5173, proxy: { '/api': 'http://127.0.0.1:8750' } },
});
