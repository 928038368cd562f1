/**
 * Browser side of Web Push: register the service worker (/sw.js), ask for permission, subscribe
 * with the server's VAPID key and hand the subscription to the server.
 */
import type { PushSubscriptionBody, PushSubscriptionDto } from '@shared/schemas/push';
import { pushApi } from '@/api/push';

/** Whether this browser can receive Web Push at all (service workers, PushManager, Notification). */
export function pushSupported(): boolean {
  return typeof window !== 'undefined' && 'serviceWorker' in navigator && 'PushManager' in window && 'Notification' in window;
}

/** base64url → bytes, for `applicationServerKey`. */
export function base64UrlToBytes(s: string): Uint8Array<ArrayBuffer> {
  const b64 = s.replace(/-/g, '+').replace(/_/g, '/').padEnd(Math.ceil(s.length / 4) * 4, '=');
  const bin = atob(b64);
  const out = new Uint8Array(new ArrayBuffer(bin.length));
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

/** A label for this browser, e.g. "Chrome on Android". */
export function browserLabel(ua = navigator.userAgent): string {
  const browser = /Edg\//.test(ua) ? 'Edge' : /Firefox\//.test(ua) ? 'Firefox' : /Chrome\//.test(ua) ? 'Chrome' : /Safari\//.test(ua) ? 'Safari' : 'Browser';
  const os = /Android/.test(ua) ? 'Android' : /iPhone|iPad/.test(ua) ? 'iOS' : /Windows/.test(ua) ? 'Windows' : /Mac OS X/.test(ua) ? 'macOS' : /Linux/.test(ua) ? 'Linux' : 'this device';
  return `${browser} on ${os}`;
}

async function registration(): Promise<ServiceWorkerRegistration> {
  await navigator.serviceWorker.register('/sw.js', { scope: '/' });
  return navigator.serviceWorker.ready;
}

/** This browser's current push subscription endpoint, or null. */
export async function currentEndpoint(): Promise<string | null> {
  if (!pushSupported()) return null;
  const reg = await navigator.serviceWorker.getRegistration('/');
  const sub = await reg?.pushManager.getSubscription();
  return sub?.endpoint ?? null;
}

/** Turns phone notifications on for this browser; throws a readable Error when it cannot. */
export async function enablePush(label = browserLabel()): Promise<PushSubscriptionDto> {
  if (!pushSupported()) throw new Error('This browser cannot receive push notifications (on iPhone, add Rimehold to the home screen first).');
  const permission = await Notification.requestPermission();
  if (permission !== 'granted') throw new Error('Notifications are blocked for this site. Allow them in the browser settings and try again.');
  const { publicKey } = await pushApi.key();
  const reg = await registration();
  const key = base64UrlToBytes(publicKey);
  let existing = await reg.pushManager.getSubscription();
  // A subscription made with another server key (another install) cannot be used: replace it.
  if (existing && !sameBytes(existing.options.applicationServerKey, key)) {
    await existing.unsubscribe();
    existing = null;
  }
  const sub = existing ?? (await reg.pushManager.subscribe({ userVisibleOnly: true, applicationServerKey: key }));
  const json = sub.toJSON();
  const body: PushSubscriptionBody = { endpoint: sub.endpoint, keys: { p256dh: json.keys?.p256dh ?? '', auth: json.keys?.auth ?? '' }, label };
  const saved = await pushApi.subscribe(body);
  localStorage.setItem(THIS_BROWSER_KEY, String(saved.id));
  return saved;
}

/** Where this browser remembers the id of its own subscription on the server. */
const THIS_BROWSER_KEY = 'rimehold.push.subscriptionId';

/** The server id of this browser's subscription, when this browser made one. */
export function thisBrowserSubscriptionId(): number | null {
  const v = Number(localStorage.getItem(THIS_BROWSER_KEY));
  return Number.isInteger(v) && v > 0 ? v : null;
}

function sameBytes(a: ArrayBuffer | null, b: Uint8Array): boolean {
  if (!a) return false;
  const x = new Uint8Array(a);
  return x.length === b.length && x.every((v, i) => v === b[i]);
}

/** Turns notifications off in this browser (the server row is removed by the caller). */
export async function disableBrowserPush(): Promise<void> {
  if (!pushSupported()) return;
  const reg = await navigator.serviceWorker.getRegistration('/');
  await (await reg?.pushManager.getSubscription())?.unsubscribe();
  localStorage.removeItem(THIS_BROWSER_KEY);
}
