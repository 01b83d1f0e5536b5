// Type declarations for the part of Electron's API the desktop shell uses. The shell is type-checked against
// these, so `npm test` and `tsc` need no Electron download; they follow Electron's own documented signatures.
declare module 'electron' {
  export interface WebPreferences {
    preload?: string;
    contextIsolation?: boolean;
    sandbox?: boolean;
    nodeIntegration?: boolean;
    nodeIntegrationInWorker?: boolean;
    webSecurity?: boolean;
    allowRunningInsecureContent?: boolean;
    webviewTag?: boolean;
    spellcheck?: boolean;
    javascript?: boolean;
  }
  export interface Rectangle {
    x: number;
    y: number;
    width: number;
    height: number;
  }
  export interface Display {
    id: number;
    bounds: Rectangle;
    workArea: Rectangle;
  }
  export const screen: {
    getAllDisplays(): Display[];
  };
  export interface BrowserWindowConstructorOptions {
    x?: number;
    y?: number;
    width?: number;
    height?: number;
    minWidth?: number;
    minHeight?: number;
    title?: string;
    backgroundColor?: string;
    show?: boolean;
    webPreferences?: WebPreferences;
  }
  export interface WebFrameMain {
    url: string;
    /** null for a window's main frame. */
    parent: WebFrameMain | null;
  }
  export interface Event {
    preventDefault(): void;
  }
  export interface WebContents {
    id: number;
    send(channel: string, ...args: unknown[]): void;
    on(event: 'will-navigate' | 'will-redirect', listener: (event: Event, url: string) => void): this;
    on(event: 'will-attach-webview', listener: (event: Event) => void): this;
    setWindowOpenHandler(handler: (details: { url: string }) => { action: 'deny' | 'allow' }): void;
    printToPDF(options: Record<string, unknown>): Promise<Buffer>;
    isDestroyed(): boolean;
  }
  export class BrowserWindow {
    constructor(options?: BrowserWindowConstructorOptions);
    webContents: WebContents;
    loadFile(path: string): Promise<void>;
    loadURL(url: string): Promise<void>;
    destroy(): void;
    once(event: 'ready-to-show', listener: () => void): this;
    on(event: 'resize' | 'move' | 'maximize' | 'unmaximize' | 'close', listener: () => void): this;
    show(): void;
    focus(): void;
    restore(): void;
    maximize(): void;
    isMinimized(): boolean;
    isMaximized(): boolean;
    isDestroyed(): boolean;
    getNormalBounds(): Rectangle;
    static getAllWindows(): BrowserWindow[];
  }
  export interface IpcMainInvokeEvent {
    sender: WebContents;
    senderFrame: WebFrameMain | null;
  }
  export const ipcMain: {
    handle(
      channel: string,
      listener: (event: IpcMainInvokeEvent, ...args: unknown[]) => Promise<unknown> | unknown,
    ): void;
  };
  export const app: {
    whenReady(): Promise<void>;
    on(
      event: 'window-all-closed' | 'activate' | 'before-quit' | 'second-instance',
      listener: () => void,
    ): void;
    on(event: 'web-contents-created', listener: (event: Event, contents: WebContents) => void): void;
    quit(): void;
    requestSingleInstanceLock(): boolean;
    getPath(name: 'userData'): string;
    enableSandbox(): void;
  };
  export interface Session {
    setPermissionRequestHandler(
      handler:
        ((webContents: WebContents, permission: string, callback: (granted: boolean) => void) => void) | null,
    ): void;
    setPermissionCheckHandler(
      handler: ((webContents: WebContents | null, permission: string) => boolean) | null,
    ): void;
  }
  export const session: {
    defaultSession: Session;
  };
  export const dialog: {
    showErrorBox(title: string, content: string): void;
  };
  export interface IpcRendererEvent {
    sender: unknown;
  }
  export const ipcRenderer: {
    invoke(channel: string, ...args: unknown[]): Promise<unknown>;
    on(channel: string, listener: (event: IpcRendererEvent, ...args: unknown[]) => void): void;
    removeListener(channel: string, listener: (event: IpcRendererEvent, ...args: unknown[]) => void): void;
  };
  export const contextBridge: {
    exposeInMainWorld(key: string, api: unknown): void;
  };
}
