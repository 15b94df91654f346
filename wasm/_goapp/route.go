// This file replaces go-app v10.1.11's pkg/app/route.go in bellcheck's browser
// build only (make wasm passes it with go build -overlay; see
// DEVELOPERS.md, "The size of app.wasm"). It is go-app's file (MIT licence,
// LICENSE beside it) with one change: the routes with a pattern are matched by
// the browser's RegExp instead of Go's regexp package, which with its
// Unicode tables is about 120 KB of the gzipped app.wasm. The patterns are
// read as JavaScript regular expressions; for the plain ones a route uses
// (anchors, ., *, +, ?, character classes, groups) the two syntaxes agree.

package app

import (
	"sync"
)

type router struct {
	mu               sync.RWMutex
	routes           map[string]func() Composer
	routesWithRegexp []regexpRoute
}

func makeRouter() router {
	return router{
		routes: make(map[string]func() Composer),
	}
}

func (r *router) route(path string, newComponent func() Composer) {
	r.mu.Lock()
	defer r.mu.Unlock()

	r.routes[path] = newComponent
}

func (r *router) routeWithRegexp(pattern string, newComponent func() Composer) {
	r.mu.Lock()
	defer r.mu.Unlock()

	r.routesWithRegexp = append(r.routesWithRegexp, regexpRoute{
		regexp:       newJSRegExp(pattern),
		newComponent: newComponent,
	})
}

func (r *router) routed(path string) bool {
	r.mu.RLock()
	defer r.mu.RUnlock()

	if _, routed := r.routes[path]; routed {
		return true
	}

	for _, rwr := range r.routesWithRegexp {
		if rwr.regexp.MatchString(path) {
			return true
		}
	}

	return false
}

func (r *router) createComponent(path string) (Composer, bool) {
	r.mu.RLock()
	defer r.mu.RUnlock()

	if newComponent, routed := r.routes[path]; routed {
		return newComponent(), true
	}

	for _, rwr := range r.routesWithRegexp {
		if rwr.regexp.MatchString(path) {
			return rwr.newComponent(), true
		}
	}

	return nil, false
}

type regexpRoute struct {
	regexp       jsRegExp
	newComponent func() Composer
}

// jsRegExp is a pattern compiled by the browser's RegExp.
type jsRegExp struct {
	re Value
}

// newJSRegExp compiles pattern with the browser's RegExp; like
// regexp.MustCompile it panics on a pattern that does not compile (RegExp
// throws).
func newJSRegExp(pattern string) jsRegExp {
	return jsRegExp{re: Window().Get("RegExp").New(pattern)}
}

// MatchString reports whether s contains a match of the pattern.
func (r jsRegExp) MatchString(s string) bool {
	return r.re.Call("test", s).Bool()
}
