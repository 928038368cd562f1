/*
 * Rimehold service worker: shows alarm pushes (Web Push, payload encrypted end to end) as a
 * notification with an "Acknowledge" action, and opens the alarm's single-use acknowledgement
 * link when the notification or the action is tapped (the alarm page acknowledges after sign-in).
 * Plain JavaScript, served as /sw.js so its scope is the whole app.
 */
/* eslint-env serviceworker */

self.addEventListener('install', () => self.skipWaiting());
self.addEventListener('activate', (event) => event.waitUntil(self.clients.claim()));

/** Reads the alarm payload {alarmId, title, body, priority, ackUrl, tag}; anything else becomes a plain notice. */
function readPayload(data) {
  let p = null;
  try {
    p = data ? data.json() : null;
  } catch (_err) {
    p = null;
  }
  if (!p || typeof p !== 'object' || typeof p.title !== 'string') {
    return { title: 'Rimehold', body: data ? data.text() : 'New alarm news.', ackUrl: null, tag: 'rimehold', urgent: false, alarmId: null };
  }
  // Only a link into this app is ever opened.
  let ackUrl = null;
  try {
    const u = new URL(p.ackUrl, self.location.origin);
    if (u.origin === self.location.origin) ackUrl = u.href;
  } catch (_err) {
    ackUrl = null;
  }
  return {
    title: p.title,
    body: typeof p.body === 'string' ? p.body : '',
    ackUrl,
    tag: typeof p.tag === 'string' ? p.tag : 'rimehold',
    urgent: p.priority === 'high' || p.priority === 'critical',
    alarmId: typeof p.alarmId === 'number' ? p.alarmId : null,
  };
}

self.addEventListener('push', (event) => {
  const p = readPayload(event.data);
  const options = {
    body: p.body,
    tag: p.tag,
    renotify: true,
    // High and critical alarms stay on screen until the technician acts.
    requireInteraction: p.urgent,
    icon: '/favicon.svg',
    badge: '/favicon.svg',
    data: { ackUrl: p.ackUrl, alarmUrl: p.alarmId ? `/alarms/${p.alarmId}` : '/alarms' },
    actions: p.ackUrl ? [{ action: 'ack', title: 'Acknowledge' }] : [],
  };
  event.waitUntil(self.registration.showNotification(p.title, options));
});

self.addEventListener('notificationclick', (event) => {
  event.notification.close();
  const data = event.notification.data || {};
  // Both the action and a tap on the notification open the link: the page acknowledges once,
  // after sign-in, and shows the alarm.
  const target = data.ackUrl || data.alarmUrl || '/alarms';
  event.waitUntil(
    self.clients.matchAll({ type: 'window', includeUncontrolled: true }).then((wins) => {
      for (const w of wins) {
        if (new URL(w.url).origin === self.location.origin && 'navigate' in w) {
          return w.focus().then(() => w.navigate(target));
        }
      }
      return self.clients.openWindow(target);
    }),
  );
});
