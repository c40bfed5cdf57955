import { StrictMode } from 'react';
import { createRoot } from 'react-dom/client';
import type { SpendmixClient } from '../../../src/api/contract.js';
import { trackActivity } from '../lib/api-activity.js';
import { App } from './App.js';
import { ActivityProvider, ClientProvider } from './client-context.js';
import '../styles/app.css';

/** Mounts the screens on #root, talking to the core through `client` (whatever its transport). */
export function mountApp(client: SpendmixClient): void {
  const container = document.getElementById('root');
  if (!container) throw new Error('The page has no #root element.');
  const activity = trackActivity(client.api);
  createRoot(container).render(
    <StrictMode>
      <ClientProvider value={{ ...client, api: activity.api }}>
        <ActivityProvider value={activity}>
          <App />
        </ActivityProvider>
      </ClientProvider>
    </StrictMode>,
  );
}

/** Shown instead of the screens when no client could be made (e.g. the page opened without its token). */
export function mountFailure(message: string): void {
  const container = document.getElementById('root');
  if (!container) return;
  createRoot(container).render(
    <main className="startup-failure" role="alert">
      <h1>Spendmix cannot reach its core</h1>
      <p>{message}</p>
    </main>,
  );
}
