import type { BrowserWindow, Session, WebContents, WebPreferences } from 'electron';
import { contentSecurityPolicy } from '../../src/api/content-security-policy.js';
import { appOrigin } from './channels.js';

/**
 * The settings every window must have (files dropped on a window go to the Sources screen's drop
 * zone and never replace the page: navigateOnDragDrop), checked again before a window opens, so
 * an option changed on the way cannot open every screen to Node.
 */
const requiredPreferences = {
  contextIsolation: true,
  sandbox: true,
  nodeIntegration: false,
  nodeIntegrationInWorker: false,
  nodeIntegrationInSubFrames: false,
  webSecurity: true,
  allowRunningInsecureContent: false,
  webviewTag: false,
  experimentalFeatures: false,
  navigateOnDragDrop: false,
} as const satisfies WebPreferences;

/**
 * The Electron security settings of DESIGN.md §12 (Electron's own security checklist): every
 * screen runs isolated and sandboxed without Node, loads only our own scheme, and can neither
 * navigate, open windows, nor get permissions.
 */
export function secureWebPreferences(preloadPath: string): WebPreferences {
  return {
    preload: preloadPath,
    ...requiredPreferences,
    spellcheck: false,
  };
}

/** The security settings a window's preferences get wrong (empty when they are all as required). */
export function insecurePreferences(preferences: WebPreferences): string[] {
  return Object.entries(requiredPreferences)
    .filter(([key, required]) => preferences[key as keyof WebPreferences] !== required)
    .map(([key, required]) => `${key} must be ${String(required)}`);
}

/** The content security policy sent with every page of ours (the same as the browser host's). */
export const electronContentSecurityPolicy = contentSecurityPolicy;

/** True for URLs of our own app scheme (the only content a window may show). */
export function isAppUrl(url: string): boolean {
  // String comparison on purpose: URL.origin is "null" for custom schemes.
  return url === appOrigin || url.startsWith(`${appOrigin}/`);
}

/** Session-wide rules: no permissions, no remote requests. */
export function lockDownSession(session: Session): void {
  session.setPermissionRequestHandler((_webContents, _permission, callback) => callback(false));
  session.setPermissionCheckHandler(() => false);
  session.setDevicePermissionHandler(() => false);
  // No remote content: anything over the network is cancelled before it leaves.
  session.webRequest.onBeforeRequest({ urls: ['http://*/*', 'https://*/*', 'ws://*/*', 'wss://*/*', 'ftp://*/*'] }, (_details, callback) =>
    callback({ cancel: true }),
  );
}

/** Per-window rules: no navigation away, no new windows, no embedded web views. */
export function lockDownContents(contents: WebContents): void {
  contents.on('will-navigate', (event, url) => {
    if (!isAppUrl(url)) event.preventDefault();
  });
  contents.on('will-redirect', (event, url) => {
    if (!isAppUrl(url)) event.preventDefault();
  });
  contents.on('will-attach-webview', (event) => event.preventDefault());
  contents.setWindowOpenHandler(() => ({ action: 'deny' }));
}

/**
 * IPC sender check: only the top frame of one of our windows, showing our own scheme, may call.
 * Frames inside the page (none are expected) and anything else are refused.
 */
export function isTrustedSender(
  event: { sender: WebContents; senderFrame: { url: string; parent: unknown } | null },
  windows: readonly BrowserWindow[],
): boolean {
  const frame = event.senderFrame;
  if (!frame || frame.parent !== null) return false;
  if (!windows.some((window) => !window.isDestroyed() && window.webContents === event.sender)) return false;
  return isAppUrl(frame.url);
}
