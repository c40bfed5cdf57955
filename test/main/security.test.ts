import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it, vi } from 'vitest';

const fake = await vi.hoisted(async () => (await import('./fake-electron.js')).createFakeElectron());
vi.mock('electron', () => fake.module);

const { insecurePreferences, isAppUrl, isTrustedSender, lockDownContents, lockDownSession, secureWebPreferences, electronContentSecurityPolicy } = await import(
  '../../main/electron/security.js'
);
const { serveAppRequest } = await import('../../main/electron/protocol.js');
const { designWindowRules } = await import('../support/design-reference.js');
const { buildMenuTemplate } = await import('../../main/electron/menu.js');
const { RecentDatabases, RECENT_LIMIT } = await import('../../main/electron/recent.js');

describe('Electron security settings (DESIGN.md §12)', () => {
  it('the window options the shell builds carry every rule of the design, with our preload', () => {
    const preferences = secureWebPreferences('/app/preload.cjs') as Record<string, unknown>;
    expect(preferences.preload).toBe('/app/preload.cjs');
    for (const { option, required, rule } of designWindowRules) expect(preferences[option], rule).toBe(required);
    expect(insecurePreferences(preferences)).toEqual([]);
  });

  it('a window refuses options with any one of those rules broken, and names it', () => {
    const good = secureWebPreferences('/app/preload.cjs') as Record<string, unknown>;
    for (const { option, required } of designWindowRules) {
      for (const wrong of [!required, undefined]) {
        expect(insecurePreferences({ ...good, [option]: wrong }), `${option} = ${String(wrong)}`).toEqual([`${option} must be ${String(required)}`]);
      }
    }
    const everythingWrong = Object.fromEntries(designWindowRules.map(({ option, required }) => [option, !required]));
    expect(insecurePreferences(everythingWrong)).toHaveLength(designWindowRules.length);
  });

  it('the content security policy allows our own origin only and no inline or remote script', () => {
    const directives = new Map(electronContentSecurityPolicy.split('; ').map((part) => [part.split(' ')[0], part.split(' ').slice(1)]));
    expect(directives.get('default-src')).toEqual(["'self'"]);
    expect(directives.get('script-src')).toEqual(["'self'"]);
    expect(directives.get('object-src')).toEqual(["'none'"]);
    expect(directives.get('frame-ancestors')).toEqual(["'none'"]);
    expect(electronContentSecurityPolicy).not.toMatch(/https?:|\*|unsafe-eval/);
  });

  it('denies every permission request and check, and cancels all network requests', () => {
    const session = fake.module.session.defaultSession;
    lockDownSession(session as never);
    const requestHandler = session.setPermissionRequestHandler.mock.calls[0][0] as (wc: unknown, permission: string, callback: (granted: boolean) => void) => void;
    for (const permission of ['media', 'geolocation', 'notifications', 'clipboard-read', 'openExternal']) {
      const callback = vi.fn();
      requestHandler({}, permission, callback);
      expect(callback).toHaveBeenCalledWith(false);
    }
    const checkHandler = session.setPermissionCheckHandler.mock.calls[0][0] as () => boolean;
    expect(checkHandler()).toBe(false);
    const deviceHandler = session.setDevicePermissionHandler.mock.calls[0][0] as () => boolean;
    expect(deviceHandler()).toBe(false);
    const [filter, listener] = session.webRequest.onBeforeRequest.mock.calls[0] as [{ urls: string[] }, (details: unknown, callback: (answer: unknown) => void) => void];
    expect(filter.urls).toEqual(expect.arrayContaining(['http://*/*', 'https://*/*', 'ws://*/*', 'wss://*/*']));
    const callback = vi.fn();
    listener({ url: 'https://example.invalid/tracker.js' }, callback);
    expect(callback).toHaveBeenCalledWith({ cancel: true });
  });

  it('blocks navigation away from our scheme, new windows and web views', () => {
    const contents = new fake.FakeWebContents();
    lockDownContents(contents as never);
    const navigate = contents.listeners.get('will-navigate')!;
    const away = { preventDefault: vi.fn() };
    navigate(away, 'https://example.invalid/');
    expect(away.preventDefault).toHaveBeenCalled();
    const fileUrl = { preventDefault: vi.fn() };
    navigate(fileUrl, 'file:///etc/passwd');
    expect(fileUrl.preventDefault).toHaveBeenCalled();
    const inside = { preventDefault: vi.fn() };
    navigate(inside, 'spendmix://app/index.html');
    expect(inside.preventDefault).not.toHaveBeenCalled();
    const redirect = { preventDefault: vi.fn() };
    contents.listeners.get('will-redirect')!(redirect, 'http://127.0.0.1:8080/');
    expect(redirect.preventDefault).toHaveBeenCalled();
    const webview = { preventDefault: vi.fn() };
    contents.listeners.get('will-attach-webview')!(webview);
    expect(webview.preventDefault).toHaveBeenCalled();
    expect(contents.windowOpenHandler!({ url: 'spendmix://app/index.html' })).toEqual({ action: 'deny' });
    expect(contents.windowOpenHandler!({ url: 'https://example.invalid/' })).toEqual({ action: 'deny' });
  });

  it('trusts IPC only from the top frame of our own window on our own scheme', () => {
    const ours = { webContents: new fake.FakeWebContents(), isDestroyed: () => false };
    const windows = [ours as never];
    const event = (url: string, parent: unknown = null, sender: unknown = ours.webContents) => ({ sender, senderFrame: { url, parent } }) as never;
    expect(isTrustedSender(event('spendmix://app/index.html'), windows)).toBe(true);
    expect(isTrustedSender(event('spendmix://app/index.html', {}), windows)).toBe(false);
    expect(isTrustedSender(event('https://example.invalid/'), windows)).toBe(false);
    expect(isTrustedSender(event('spendmix://app.example/'), windows)).toBe(false);
    expect(isTrustedSender(event('spendmix://app/index.html', null, new fake.FakeWebContents()), windows)).toBe(false);
    expect(isTrustedSender({ sender: ours.webContents, senderFrame: null } as never, windows)).toBe(false);
    expect(isAppUrl('spendmix://app')).toBe(true);
    expect(isAppUrl('spendmix://apple/')).toBe(false);
  });
});

describe('app scheme file serving', () => {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-protocol-'));
  const rendererDir = join(folder, 'renderer');
  mkdirSync(join(rendererDir, 'assets'), { recursive: true });
  writeFileSync(join(rendererDir, 'index.html'), '<!doctype html><div id="root"></div>');
  writeFileSync(join(rendererDir, 'assets', 'app.js'), 'export {};');
  writeFileSync(join(folder, 'private.txt'), 'not for the page');

  it('serves the renderer with the CSP header and the right types', async () => {
    const page = await serveAppRequest(rendererDir, 'spendmix://app/index.html');
    expect(page.headers.get('content-security-policy')).toBe(electronContentSecurityPolicy);
    expect(page.headers.get('content-type')).toMatch(/^text\/html/);
    const script = await serveAppRequest(rendererDir, 'spendmix://app/assets/app.js');
    expect(script.headers.get('content-type')).toMatch(/^text\/javascript/);
    expect(await script.text()).toBe('export {};');
  });

  it('never serves a file outside the renderer folder', async () => {
    for (const url of ['spendmix://app/../private.txt', 'spendmix://app/%2e%2e/private.txt', 'spendmix://app/..%2Fprivate.txt']) {
      const answer = await serveAppRequest(rendererDir, url);
      expect(await answer.text()).not.toContain('not for the page');
    }
    // Screen routes get the page itself.
    expect(await (await serveAppRequest(rendererDir, 'spendmix://app/segments')).text()).toContain('id="root"');
  });
});

describe('application menu and recent databases', () => {
  it('has open, new, recent, import, export and quit, each wired to its action', () => {
    const actions = { openDatabase: vi.fn(), newDatabase: vi.fn(), openRecent: vi.fn(), importFile: vi.fn(), exportRun: vi.fn() };
    const template = buildMenuTemplate(actions, ['/data/march.db', '/data/april.db'], 'linux');
    const file = template[0].submenu as { label?: string; role?: string; click?: () => void; submenu?: { label: string; click?: () => void }[] }[];
    const byLabel = (label: string) => file.find((item) => item.label === label)!;
    byLabel('Open Database…').click!();
    byLabel('New Database…').click!();
    byLabel('Import File…').click!();
    byLabel('Export…').click!();
    byLabel('Open Recent').submenu![1].click!();
    expect(actions.openDatabase).toHaveBeenCalledOnce();
    expect(actions.newDatabase).toHaveBeenCalledOnce();
    expect(actions.importFile).toHaveBeenCalledOnce();
    expect(actions.exportRun).toHaveBeenCalledOnce();
    expect(actions.openRecent).toHaveBeenCalledWith('/data/april.db');
    expect(file.some((item) => item.role === 'quit')).toBe(true);
    expect(buildMenuTemplate(actions, [], 'darwin')[0]).toEqual({ role: 'appMenu' });
  });

  it('keeps the recent list most-recent-first, unique, bounded, and survives a damaged file', () => {
    const file = join(mkdtempSync(join(tmpdir(), 'spendmix-recent-')), 'recent.json');
    const recent = new RecentDatabases(file);
    expect(recent.list()).toEqual([]);
    for (let i = 0; i < RECENT_LIMIT + 3; i++) recent.remember(`/data/${i}.db`);
    recent.remember('/data/2.db');
    const list = recent.list();
    expect(list[0]).toBe('/data/2.db');
    expect(list).toHaveLength(RECENT_LIMIT);
    expect(new Set(list).size).toBe(list.length);
    writeFileSync(file, '{not json');
    expect(recent.list()).toEqual([]);
  });
});
