// The service worker (scope /): shows a Web Push notification and opens its link when tapped.
//
//   push event ─▶ payload {title, body, url, tier, advisoryId, advisoryOnly} (src/notify/channels/webpush.ts) ─▶ showNotification
//   notificationclick ─▶ a window of this box already open: focus it and go to the url; else open one
//
// The url of an advisory that can be acknowledged is its acknowledge link (ack.html#t=...): the
// token stays in the fragment. Nothing is cached: the dashboard must always show live data.
self.addEventListener("install", () => self.skipWaiting());
self.addEventListener("activate", (event) => event.waitUntil(self.clients.claim()));

self.addEventListener("push", (event) => {
  let data = {};
  try {
    data = event.data ? event.data.json() : {};
  } catch {
    data = { title: "millwarden", body: event.data ? event.data.text() : "" };
  }
  const title = typeof data.title === "string" && data.title ? data.title : "millwarden (advisory only)";
  event.waitUntil(
    self.registration.showNotification(title, {
      body: [typeof data.body === "string" ? data.body : "", typeof data.advisoryOnly === "string" ? data.advisoryOnly : ""].filter(Boolean).join("\n"),
      icon: "/icon-192.png",
      badge: "/icon-192.png",
      // One notification per advisory on screen: a later message about it replaces the earlier.
      tag: typeof data.advisoryId === "string" ? data.advisoryId : undefined,
      // A warning stays on screen until it is dealt with.
      requireInteraction: data.tier === "warning",
      data: { url: typeof data.url === "string" ? data.url : "/" },
    }),
  );
});

self.addEventListener("notificationclick", (event) => {
  event.notification.close();
  const target = new URL(event.notification.data?.url ?? "/", self.location.origin);
  // Only this box's own pages.
  const url = target.origin === self.location.origin ? target.href : self.location.origin + "/";
  event.waitUntil(
    (async () => {
      const windows = await self.clients.matchAll({ type: "window", includeUncontrolled: true });
      for (const w of windows) {
        if (new URL(w.url).origin === self.location.origin && "navigate" in w) {
          await w.focus();
          return w.navigate(url);
        }
      }
      return self.clients.openWindow(url);
    })(),
  );
});
