// Test-only entry: the real screens over the in-memory fake core, for screenshots.
import { mountApp } from '../../../renderer/src/app/mount.js';
import { fakeClient } from './fake-client.js';

mountApp(fakeClient);
