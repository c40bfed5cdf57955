import { defineConfig } from 'vite';
import react from '@vitejs/plugin-react';
import { fileURLToPath } from 'node:url';

// Serves the real screens over the fake core (fake-client.ts) for looking; never built for the app.
export default defineConfig({
  root: fileURLToPath(new URL('.', import.meta.url)),
  plugins: [react()],
  server: { host: '127.0.0.1', strictPort: false, fs: { allow: [fileURLToPath(new URL('../../..', import.meta.url))] } },
  logLevel: 'warn',
});
