// Runs in the sandboxed preload of the desktop window. Exposes the bridge (bridge.ts) as window.nullbench.
import { contextBridge, ipcRenderer } from 'electron';
import { makeBridge } from './bridge';

contextBridge.exposeInMainWorld('nullbench', makeBridge(ipcRenderer));
