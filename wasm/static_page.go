//go:build !(js && wasm)

package main

import (
	"encoding/json"
	"strings"
)

// contentSecurityPolicy is the page's content security policy, set in a
// meta element of its head. It allows only the page's own origin, and of
// that only what go-app's loader and the program need:
//
//   - script-src 'self' 'wasm-unsafe-eval': wasm_exec.js and app.js (go-app's
//     pre-rendered page has no inline script, so no hash is needed; a test
//     checks that) and the compilation of app.wasm; no 'unsafe-eval', so no
//     eval or new Function anywhere;
//   - style-src-elem 'self': the style sheets; style-src-attr
//     'unsafe-inline': the style attributes go-app sets for the figures'
//     layers (positions, aspect ratios), never built from user text; the
//     style-src fallback covers browsers without the two directives;
//   - img-src 'self' blob:: the icon, and the PNG export, which draws the
//     plot's SVG from an object URL;
//   - connect-src 'self': the fetch of app.wasm; worker-src and
//     manifest-src 'self': the service worker and the manifest;
//   - default-src, object-src, frame-src 'none', base-uri and form-action
//     'none': nothing else loads, no plugin, no frame inside the page, no
//     <base> and no form can redirect anything.
//
// frame-ancestors cannot be given in a meta element (browsers ignore it
// there), so who may embed the page is left to the server's headers.
const contentSecurityPolicy = "default-src 'none'; " +
	"script-src 'self' 'wasm-unsafe-eval'; " +
	"style-src 'self' 'unsafe-inline'; style-src-elem 'self'; style-src-attr 'unsafe-inline'; " +
	"img-src 'self' blob:; " +
	"connect-src 'self'; " +
	"worker-src 'self'; manifest-src 'self'; " +
	"object-src 'none'; frame-src 'none'; base-uri 'none'; form-action 'none'"

// cspMeta is the meta element carrying the policy.
const cspMeta = `<meta http-equiv="Content-Security-Policy" content="` + contentSecurityPolicy + `">`

// workerTemplate is the service worker (go-app's template language:
// {{.Version}}, {{.ResourcesToCache}}; PAGE_URL and ROOT_URL are replaced by
// serviceWorker).
// It keeps go-app's install and activate steps (cache every resource of
// the version, drop older caches) and serves from the cache first; a page
// navigation the cache does not hold (the prefix with its trailing slash, a
// query) goes to the network and, offline, gets the cached index.html, so
// the calculator opens offline under any path. The calculator sends no push
// notifications, so the worker has no handlers for them.
const workerTemplate = `// bellcheck's service worker: offline use after the first visit.
const cacheName = "app-" + "{{.Version}}";
// go-app lists the site's root without its final slash ("/tools/bellcheck"
// under a prefix), which a static server answers with a redirect or not at
// all: cache the page under the address people open instead.
const rootURL = ROOT_URL;
const resourcesToCache = {{.ResourcesToCache}}.map((u) => (u === rootURL ? rootURL + "/" : u));
const pageURL = PAGE_URL;

self.addEventListener("install", (event) => {
  event.waitUntil((async () => {
    const cache = await caches.open(cacheName);
    await cache.addAll(resourcesToCache);
    await self.skipWaiting();
  })());
});

self.addEventListener("activate", (event) => {
  event.waitUntil((async () => {
    const keys = await caches.keys();
    await Promise.all(keys.filter((k) => k !== cacheName).map((k) => caches.delete(k)));
    await self.clients.claim();
  })());
});

self.addEventListener("fetch", (event) => {
  if (event.request.method !== "GET") {
    return;
  }
  event.respondWith(fromCache(event.request));
});

async function fromCache(request) {
  const cached = await caches.match(request);
  if (cached) {
    return plain(cached);
  }
  try {
    return await fetch(request);
  } catch (err) {
    if (request.mode === "navigate") {
      const page = await caches.match(pageURL);
      if (page) {
        return plain(page);
      }
    }
    throw err;
  }
}

// plain returns a cached response that went through a redirect (some
// servers send /index.html on to the folder) as a fresh one: the browser
// refuses a redirected response for a page navigation.
async function plain(response) {
  if (!response.redirected) {
    return response;
  }
  return new Response(await response.blob(), {
    status: response.status,
    statusText: response.statusText,
    headers: response.headers,
  });
}
`

// serviceWorker returns the worker template for a site whose index page is
// at pageURL and whose root go-app writes as root ("/tools/bellcheck" under
// a prefix, "/" at the server's root).
func serviceWorker(pageURL, root string) string {
	page, _ := json.Marshal(pageURL) // strings always marshal
	r := ""
	if root != "/" {
		r = root
	}
	rootJS, _ := json.Marshal(r)
	return strings.NewReplacer("PAGE_URL", string(page), "ROOT_URL", string(rootJS)).Replace(workerTemplate)
}
