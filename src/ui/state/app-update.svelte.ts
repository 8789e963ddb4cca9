/**
 * The app's offline copy and its updates, seen from the page. The built app registers its service
 * worker (dist/sw.js, written by pwa/build-service-worker.ts); the development server does not.
 * A new deployment installs beside the build in use and waits: `appUpdate.ready` turns true and the
 * page says so; nothing changes until the user chooses `applyUpdate`, which first saves the work
 * (IndexedDB, untouched by the update), then lets the new build take over and reloads once. The
 * service worker is asked for updates at start, when the page becomes visible again and hourly.
 */

export const appUpdate = $state({
  /** A new version is installed and waits for the user. */
  ready: false,
  /** The build in use is kept for offline use (a service worker controls this page). */
  offline: false,
  /** The user chose "Later" for the update shown now. */
  postponed: false,
});

let registration: ServiceWorkerRegistration | null = null;
let reloading = false;

const UPDATE_CHECK_MS = 60 * 60 * 1000;

function supported(): boolean {
  return import.meta.env.PROD && typeof navigator !== 'undefined' && 'serviceWorker' in navigator
    && (location.protocol === 'https:' || location.protocol === 'http:');
}

function watchInstalling(worker: ServiceWorker | null): void {
  if (!worker) return;
  worker.addEventListener('statechange', () => {
    // Installed while another build controls the page: a new version waits. (With no controller this
    // is the first visit, and the build just installed is the one in use.)
    if (worker.state === 'installed' && navigator.serviceWorker.controller) {
      appUpdate.ready = true;
      appUpdate.postponed = false;
    }
  });
}

function checkForUpdate(): void {
  // Offline, or the server is gone: the check fails quietly and the build in use carries on.
  registration?.update().catch(() => undefined);
}

/** Registers the service worker once (built app only) and starts watching for new versions. */
export async function startOfflineApp(): Promise<void> {
  if (!supported() || registration) return;
  try {
    registration = await navigator.serviceWorker.register('./sw.js', { scope: './' });
  } catch {
    // Without a service worker the app works as before, online only; nothing to tell the user here.
    return;
  }
  appUpdate.offline = !!navigator.serviceWorker.controller;
  if (registration.waiting && navigator.serviceWorker.controller) appUpdate.ready = true;
  watchInstalling(registration.installing);
  registration.addEventListener('updatefound', () => watchInstalling(registration?.installing ?? null));
  navigator.serviceWorker.addEventListener('controllerchange', () => {
    appUpdate.offline = true;
    if (reloading) location.reload();
  });
  void navigator.serviceWorker.ready.then(() => { appUpdate.offline = !!navigator.serviceWorker.controller || appUpdate.offline; });
  document.addEventListener('visibilitychange', () => { if (document.visibilityState === 'visible') checkForUpdate(); });
  setInterval(checkForUpdate, UPDATE_CHECK_MS);
}

/**
 * Switches to the waiting version: `save` runs first (the session's flush), then the new build takes
 * over and the page reloads once. Without a waiting version (another tab took it already) it reloads.
 */
export async function applyUpdate(save: () => Promise<void>): Promise<void> {
  await save();
  const waiting = registration?.waiting;
  reloading = true;
  if (waiting) waiting.postMessage({ type: 'activate-now' });
  else location.reload();
}
