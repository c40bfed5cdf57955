import { defineConfig } from 'vite';
import react from '@vitejs/plugin-react';
import { fileURLToPath } from 'node:url';

// Serves the real renderer page with the fake core (fake-client.ts) as its entry, for looking;
// never built for the app. The page itself is renderer/index.html with its script swapped.
const previewEntry = fileURLToPath(new URL('./main.js', import.meta.url));

export default defineConfig({
  root: fileURLToPath(new URL('../../../renderer', import.meta.url)),
  plugins: [
    react(),
    {
      name: 'spendmix-fake-core-entry',
      transformIndexHtml: (html) => html.replace('./src/main.tsx', `/@fs${previewEntry}`),
    },
  ],
  server: { host: '127.0.0.1', strictPort: false, fs: { allow: [fileURLToPath(new URL('../../..', import.meta.url))] } },
  logLevel: 'warn',
});
