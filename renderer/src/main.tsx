import { mountApp, mountFailure } from './app/mount.js';
import { createClient } from './api-client/index.js';

// Entry of the renderer bundle: make the transport-agnostic client, then mount the screens.
createClient().then(mountApp, (error: unknown) => mountFailure(error instanceof Error ? error.message : String(error)));
