/**
 * The Electron entry point (bundled to build/main/main.cjs). The only module that imports
 * Electron at run time besides the preload; everything it wires is a tested plain module.
 */
import { BrowserWindow, Menu, app, dialog, ipcMain, protocol, session, systemPreferences } from 'electron';
import { existsSync } from 'node:fs';
import path from 'node:path';
import type { DialogLike } from './handlers.ts';
import { createHandlers } from './handlers.ts';
import { registerIpc } from './ipc.ts';
import { APP_SCHEME_PRIVILEGES, createAppProtocolHandler } from './protocol.ts';
import { createRecordsStore } from './records-store.ts';
import {
  APP_PAGE_URL,
  APP_SCHEME,
  applySessionSecurity,
  applyWebContentsSecurity,
  isTrustedSenderFrame,
  parseDevServerOrigin,
  type OriginPolicy,
  type SecurityDeps,
} from './security.ts';
import { menuTemplate, windowOptions } from './window.ts';

const isDev = !app.isPackaged;
/** In development only, `SPANMETER_DEV_SERVER_URL=http://localhost:5173` loads the Vite dev server. */
const devServerOrigin = isDev ? parseDevServerOrigin(process.env.SPANMETER_DEV_SERVER_URL) : null;
const policy: OriginPolicy = devServerOrigin ? { devServerOrigin } : {};

const preloadPath = path.join(__dirname, 'preload.cjs');
const rendererDir = path.join(__dirname, '..', 'renderer');

const securityDeps: SecurityDeps = {
  isDev,
  log: (line) => console.warn(line),
  policy,
  // macOS asks the user once per app; the prompt shows NSMicrophoneUsageDescription.
  confirmMicrophoneAccess:
    process.platform === 'darwin' ? () => systemPreferences.askForMediaAccess('microphone') : undefined,
};

// Before 'ready': the scheme must be privileged before any session exists.
protocol.registerSchemesAsPrivileged([APP_SCHEME_PRIVILEGES]);
// Checklist item 4: sandbox every renderer, whatever its options say.
app.enableSandbox();

let mainWindow: BrowserWindow | null = null;

function boundDialog(): DialogLike {
  const parent = () => BrowserWindow.getFocusedWindow() ?? mainWindow;
  return {
    showSaveDialog: (options) => {
      const win = parent();
      return win ? dialog.showSaveDialog(win, options) : dialog.showSaveDialog(options);
    },
    showOpenDialog: (options) => {
      const win = parent();
      return win ? dialog.showOpenDialog(win, options) : dialog.showOpenDialog(options);
    },
  };
}

async function createWindow(): Promise<void> {
  const win = new BrowserWindow(windowOptions(preloadPath, app.isPackaged));
  mainWindow = win;
  win.once('ready-to-show', () => win.show());
  win.on('closed', () => {
    if (mainWindow === win) mainWindow = null;
  });
  await win.loadURL(devServerOrigin ? `${devServerOrigin}/` : APP_PAGE_URL);
}

async function start(): Promise<void> {
  await app.whenReady();

  if (!devServerOrigin && !existsSync(path.join(rendererDir, 'index.html'))) {
    dialog.showErrorBox(
      'Spanmeter',
      `The user interface is missing (${rendererDir}). Run "npm start" to build it.`,
    );
    app.quit();
    return;
  }

  // No developer tools or reload in a packaged build's menu (main/window.ts).
  Menu.setApplicationMenu(Menu.buildFromTemplate(menuTemplate(app.isPackaged, process.platform)));
  protocol.handle(APP_SCHEME, createAppProtocolHandler({ root: rendererDir }));
  applySessionSecurity(session.defaultSession, securityDeps);

  const userData = app.getPath('userData');
  const store = createRecordsStore({
    recordsDir: path.join(userData, 'records'),
    autosaveFile: path.join(userData, 'autosave', 'run.json'),
  });
  registerIpc(
    ipcMain,
    createHandlers({
      store,
      dialog: boundDialog(),
      exportDir: () => app.getPath('documents'),
    }),
    {
      // Checklist item 17: only the app's own top-level page may call.
      isTrustedSender: (event) => isTrustedSenderFrame(event.senderFrame, policy),
      log: isDev ? (line) => console.warn(line) : undefined,
    },
  );

  await createWindow();

  // macOS: re-create the window when the dock icon is clicked and none is open.
  app.on('activate', () => {
    if (BrowserWindow.getAllWindows().length === 0) void createWindow();
  });
}

// One instance at a time: two would write the same records folder.
if (!app.requestSingleInstanceLock()) {
  app.quit();
} else {
  app.on('second-instance', () => {
    if (mainWindow) {
      if (mainWindow.isMinimized()) mainWindow.restore();
      mainWindow.focus();
    }
  });
  // Checklist items 12–14 for every webContents the app ever creates, the main window's included.
  app.on('web-contents-created', (_event, contents) => applyWebContentsSecurity(contents, securityDeps));
  // Quit when the last window closes, except on macOS, where apps stay in the dock.
  app.on('window-all-closed', () => {
    if (process.platform !== 'darwin') app.quit();
  });
  start().catch((err: unknown) => {
    dialog.showErrorBox('Spanmeter could not start', err instanceof Error ? err.message : String(err));
    app.exit(1);
  });
}
