// This file replaces go-app v10.1.11's pkg/app/engine.go in bellcheck's
// browser build only (make wasm copies it over go-app's in .cache/goapp; see
// DEVELOPERS.md, "The size of app.wasm" and "The page's components and
// runner"). It is go-app's file (MIT licence, LICENSE beside it) with one
// change: Start processes a frame right after each dispatch (and the
// dispatches queued with it) rather than on a timer at a frame rate, and
// pauses a frame duration only after a frame that queued dispatches; before
// the frame, the goroutines those dispatches started run until they wait.

package app

import (
	"bytes"
	"context"
	"encoding/json"
	"net/url"
	"reflect"
	"runtime"
	"strings"
	"sync"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/errors"
)

type engineX struct {
	ctx context.Context

	localStorage   BrowserStorage
	sessionStorage BrowserStorage
	browser        browser

	routes         *router
	internalURLs   []string
	resolveURL     func(string) string
	originPage     *requestPage
	lastVisitedURL *url.URL

	nodes   nodeManager
	updates updateManager
	body    HTMLBody

	dispatches chan func()
	defers     chan func()
	goroutines sync.WaitGroup

	asynchronousActionHandlers map[string]ActionHandler
	actions                    actionManager
	states                     stateManager
}

func newEngine(ctx context.Context, routes *router, resolveURL func(string) string, originPage *requestPage, actionHandlers map[string]ActionHandler) *engineX {
	var localStorage BrowserStorage
	var sessionStorage BrowserStorage
	if IsServer {
		localStorage = newMemoryStorage()
		sessionStorage = newMemoryStorage()
	} else {
		localStorage = newJSStorage("localStorage")
		sessionStorage = newJSStorage("sessionStorage")
	}

	if resolveURL == nil {
		resolveURL = func(v string) string { return v }
	}
	originPage.resolveURL = resolveURL

	engine := &engineX{
		ctx:                        ctx,
		routes:                     routes,
		resolveURL:                 resolveURL,
		originPage:                 originPage,
		localStorage:               localStorage,
		lastVisitedURL:             &url.URL{},
		sessionStorage:             sessionStorage,
		nodes:                      nodeManager{},
		dispatches:                 make(chan func(), 4096),
		defers:                     make(chan func(), 4096),
		asynchronousActionHandlers: actionHandlers,
	}

	engine.initBrowser()
	return engine
}

func (e *engineX) baseContext() Context {
	return Context{
		Context:               e.ctx,
		resolveURL:            e.resolveURL,
		appUpdatable:          e.browser.AppUpdatable,
		page:                  e.page,
		navigate:              e.Navigate,
		localStorage:          e.localStorage,
		sessionStorage:        e.sessionStorage,
		dispatch:              e.dispatch,
		defere:                e.defere,
		async:                 e.async,
		addComponentUpdate:    e.updates.Add,
		removeComponentUpdate: e.updates.Done,
		handleAction:          e.actions.Handle,
		postAction:            e.actions.Post,
		observeState:          e.states.Observe,
		getState:              e.states.Get,
		setState:              e.states.Set,
		delState:              e.states.Delete,

		notifyComponentEvent: e.nodes.NotifyComponentEvent,
	}
}

// Navigate directs the engine to the specified URL destination, which might be
// an internal page within the app, an external link outside the app, or a
// mailto link. If the 'updateHistory' flag is true, the destination is added to
// the browser's history.
func (e *engineX) Navigate(destination *url.URL, updateHistory bool) {
	if destination.Host == "" {
		destination.Host = e.originPage.URL().Host
	}

	switch {
	case e.internalURL(destination),
		e.mailTo(destination):
		Window().Get("location").Set("href", destination.String())
		return

	case e.externalNavigation(destination):
		Window().Call("open", destination.String())
		return

	case destination.String() == e.lastVisitedURL.String():
		return
	}

	defer func() {
		if updateHistory {
			Window().addHistory(destination)
		}
		e.lastVisitedURL = destination

		e.nodes.NotifyComponentEvent(e.baseContext(), e.body, nav{})

		if destination.Fragment != "" {
			e.defere(func() {
				Window().ScrollToID(destination.Fragment)
			})
		}
	}()

	if destination.Path == e.lastVisitedURL.Path &&
		destination.Fragment != e.lastVisitedURL.Fragment {
		return
	}

	path := strings.TrimPrefix(destination.Path, Getenv("GOAPP_ROOT_PREFIX"))
	if !strings.HasPrefix(path, "/") {
		path = "/" + path
	}
	root, ok := e.routes.createComponent(path)
	if !ok {
		root = &notFound{}
	}

	if err := e.Load(root); err != nil {
		panic(errors.New("loading component failed").
			WithTag("component-type", reflect.TypeOf(root)).
			Wrap(err))
	}
}

func (e *engineX) initBrowser() {
	if IsServer {
		return
	}
	e.browser.HandleEvents(e.baseContext(), e.notifyComponentEvent)
}

func (e *engineX) notifyComponentEvent(event any) {
	e.nodes.NotifyComponentEvent(e.baseContext(), e.body, event)
}

func (e *engineX) externalNavigation(v *url.URL) bool {
	return v.Host != e.originPage.URL().Host
}

func (e *engineX) mailTo(v *url.URL) bool {
	return v.Scheme == "mailto"
}

func (e *engineX) internalURL(v *url.URL) bool {
	if e.internalURLs == nil {
		json.Unmarshal([]byte(Getenv("GOAPP_INTERNAL_URLS")), &e.internalURLs)
	}

	url := v.String()
	for _, u := range e.internalURLs {
		if strings.HasPrefix(url, u) {
			return true
		}
	}
	return false
}

func (e *engineX) page() Page {
	if IsClient {
		return makeBrowserPage(e.resolveURL)
	}
	return e.originPage
}

func (e *engineX) Load(v Composer) error {
	if e.body == nil {
		body := Body()
		body = body.setJSElement(Window().Get("document").Get("body")).(HTMLBody)

		firstChild := Div()
		firstChild = firstChild.setJSElement(body.JSValue().firstElementChild()).(HTMLDiv)
		firstChild = firstChild.setParent(body).(HTMLDiv)

		body = body.setBody([]UI{firstChild}).(HTMLBody)
		e.body = body

		for action, handler := range e.asynchronousActionHandlers {
			e.actions.Handle(action, body, true, handler)
		}
	}

	body, err := e.nodes.Update(e.baseContext(), e.body, Body().privateBody(v))
	if err != nil {
		return errors.New("updating root failed").Wrap(err)
	}
	e.body = body.(HTMLBody)
	return nil
}

// Start initiates the main event loop of the engine. In this build a frame
// (the components' updates, then the deferred functions) follows each
// dispatch at once, after the dispatches already queued, instead of at the
// next tick of a timer at the given framerate: the page's result reached
// the screen up to a frame duration later, with the thread idle meanwhile.
// Dispatches queued together share one frame, and the goroutines they
// started (ctx.Async: the page's analysis) run before it until they wait,
// so an analysis starts before the page redraws for the edit that asked
// for it, and a small one's result shares that frame. When a frame itself queues
// dispatches, the loop pauses a frame duration before it takes them, so a
// chain of such frames cannot hold the page's thread.
func (e *engineX) Start(framerate int) {
	if framerate <= 0 {
		framerate = 30
	}
	frameDuration := time.Second / time.Duration(framerate)

	e.states.CleanupExpiredPersistedStates(e.baseContext())
	e.consumeQueued()
	e.processFrame() // what loading the page queued (its first timer tick did)

	for {
		select {
		case dispatch := <-e.dispatches:
			dispatch()
			e.consumeQueued()
			// The goroutines the dispatches started (an analysis) run
			// first, until they wait: a small analysis's result then
			// shares this frame, and a larger one has begun.
			runtime.Gosched()
			e.consumeQueued()
			e.processFrame()
			if len(e.dispatches) > 0 {
				time.Sleep(frameDuration)
			}

		case <-e.ctx.Done():
			return
		}
	}
}

// consumeQueued runs the dispatches already queued, without waiting for
// more.
func (e *engineX) consumeQueued() {
	for {
		select {
		case dispatch := <-e.dispatches:
			dispatch()

		default:
			return
		}
	}
}

func (e *engineX) processFrame() {
	e.updates.UpdateForEach(func(c Composer) {
		if !c.Mounted() {
			return
		}

		if _, err := e.nodes.UpdateComponentRoot(e.baseContext(), c); err != nil {
			panic(errors.New("updating component failed").Wrap(err))
		}
	})
	e.executeDefers()
	e.actions.Cleanup()
	e.states.Cleanup()
}

func (e *engineX) executeDefers() {
	for {
		select {
		case defere := <-e.defers:
			defere()

		default:
			return
		}
	}
}

// ConsumeNext waits for any ongoing goroutines to finish, then executes the
// next dispatch in the queue. After executing the dispatch, it processes a
// frame.
func (e *engineX) ConsumeNext() {
	e.goroutines.Wait()
	dispatch := <-e.dispatches
	dispatch()
	e.processFrame()
}

// ConsumeAll continuously waits for ongoing goroutines to finish, executes all
// available dispatches in the queue until none are left, and then processes a
// frame.
func (e *engineX) ConsumeAll() {
	for {
		select {
		case dispatch := <-e.dispatches:
			dispatch()

		default:
			e.processFrame()
			e.goroutines.Wait()
			if len(e.dispatches) == 0 {
				return
			}
		}
	}
}

// Encode serializes the given HTML element, integrating the engine's root
// component as the initial child within the document's body. The final HTML
// content, including the standard DOCTYPE declaration, is written  to the
// provided buffer.
func (e *engineX) Encode(w *bytes.Buffer, document HTMLHtml) error {
	if e.body == nil {
		return errors.New("no component loaded")
	}
	root := e.body.body()[0]

	var body HTML
	for _, child := range document.(HTML).body() {
		if child, isBody := child.(HTMLBody); isBody {
			body = child
			break
		}
	}
	if body == nil {
		return errors.New("document does not have a body")
	}

	children := make([]UI, 0, len(body.body())+1)
	children = append(children, root)
	children = append(children, body.body()...)
	body.setBody(children)

	w.WriteString("<!doctype html>\n")
	e.nodes.Encode(e.baseContext(), w, document)
	return nil
}

func (e *engineX) dispatch(v func()) {
	e.dispatches <- v
}

func (e *engineX) defere(v func()) {
	e.defers <- v
}

func (e *engineX) async(v func()) {
	e.goroutines.Add(1)
	go func() {
		v()
		e.goroutines.Done()
	}()
}
