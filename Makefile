# bellcheck build, test and benchmark targets. `make help` lists them.

GO        ?= go
WASM_EXEC := $(shell $(GO) env GOROOT)/lib/wasm/go_js_wasm_exec
FUZZTIME  ?= 60s
ADDR      ?= 127.0.0.1:8000
# Packages whose tests also run as WebAssembly under node (pure Go, no DOM).
WASM_TEST_PKGS := ./engine/...

.PHONY: help run wasm bin static test test-native test-wasm test-browser bench fuzz tools-node tools-chromium clean

help:
	@echo "make run     build web/app.wasm and serve the calculator on http://$(ADDR)"
	@echo "make test    every test (native, WebAssembly under node, browser)"
	@echo "make bench   benchmarks (engine native and WebAssembly, wasm size)"
	@echo "make fuzz    run each fuzz target for FUZZTIME (default $(FUZZTIME))"
	@echo "make static  write the static site into dist/"

# The page's code is built without inlining (the engine's numerical
# packages keep it): it runs once per event, not per grid point, and the
# wasm must stay under 3 MB gzipped. So are the packages that run once per
# edit or per result: the model parser, the options text, the link state,
# the SVG figures, fmt and encoding/json (together 62 KB of the gzipped
# wasm; DEVELOPERS.md, "The size of app.wasm").
NOINLINE := -gcflags='github.com/maxence-charriere/go-app/v10/...=-l' \
	-gcflags='bellcheck/app/ui=-l' -gcflags='bellcheck/app/jsdom=-l' -gcflags='bellcheck/app/export=-l' \
	-gcflags='bellcheck/app/figure=-l' -gcflags='bellcheck/app/share=-l' \
	-gcflags='bellcheck/engine/model=-l' -gcflags='bellcheck/engine/paramopt=-l' \
	-gcflags='fmt=-l' -gcflags='encoding/json=-l'

# The browser build uses go-app without its http.go and with four of its
# files swapped for those in wasm/_goapp: this keeps net/http (with the
# TLS and crypto packages it initialises) and Go's regexp out of app.wasm
# (DEVELOPERS.md, "The size of app.wasm"), and draws a frame right after
# each dispatch (engine.go; "The page's components and runner"). The copy of go-app so patched is
# made in .cache/goapp and used through a copy of go.mod with a replace
# line (-modfile); the native build is untouched. The swap is refused when
# go-app's files are not the ones wasm/_goapp was written from (another
# go-app version).
GOAPP      := github.com/maxence-charriere/go-app/v10
GOAPP_COPY := $(CURDIR)/.cache/goapp
GOAPP_MOD  := .cache/wasm.mod

wasm:
	@$(GO) mod download $(GOAPP)
	@dir=$$($(GO) list -m -f '{{.Dir}}' $(GOAPP)) && [ -n "$$dir" ] || { echo "make wasm: go-app's folder not found"; exit 1; }; \
	  (cd "$$dir" && sha256sum --quiet --strict -c "$(CURDIR)/wasm/_goapp/upstream.sha256") || { \
	    echo "make wasm: go-app's files in $$dir are not those wasm/_goapp replaces (another go-app version?): update wasm/_goapp (DEVELOPERS.md, The size of app.wasm)"; exit 1; }; \
	  rm -rf "$(GOAPP_COPY)" && mkdir -p "$(GOAPP_COPY)/pkg" && \
	  cp "$$dir/go.mod" "$$dir/LICENSE" "$(GOAPP_COPY)/" && cp -R "$$dir/pkg/app" "$$dir/pkg/errors" "$(GOAPP_COPY)/pkg/" && \
	  chmod -R u+w "$(GOAPP_COPY)" && rm "$(GOAPP_COPY)/pkg/app/http.go" && \
	  cp wasm/_goapp/engine.go wasm/_goapp/resource.go wasm/_goapp/route.go wasm/_goapp/wasm.go "$(GOAPP_COPY)/pkg/app/" && \
	  { cat go.mod; echo; echo "replace $(GOAPP) => $(GOAPP_COPY)"; } >$(GOAPP_MOD) && cp go.sum $(GOAPP_MOD:.mod=.sum)
	GOOS=js GOARCH=wasm $(GO) build -modfile=$(GOAPP_MOD) -trimpath -ldflags="-s -w" $(NOINLINE) -o web/app.wasm ./wasm

bin:
	$(GO) build -trimpath -o bin/bellcheck ./wasm

run: wasm bin
	./bin/bellcheck serve -addr $(ADDR)

static: wasm bin
	rm -rf dist
	./bin/bellcheck static dist

test: test-native test-wasm test-browser

test-native:
	$(GO) mod download
	$(GO) vet ./...
	$(GO) test -count=1 ./...

test-wasm: tools-node
	GOOS=js GOARCH=wasm $(GO) test -count=1 -exec="$(WASM_EXEC)" $(WASM_TEST_PKGS)

# Browser tests: chromium drives the static build served on 127.0.0.1.
test-browser: tools-chromium wasm
	BELLCHECK_CHROMIUM=$$(command -v chromium) $(GO) test -count=1 -timeout=40m -tags=browser -run=Browser ./wasm/

# chromium runs the browser tests; install Debian's when missing.
tools-chromium:
	@command -v chromium >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    echo "installing chromium from Debian (needed for the browser tests)"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; \
	  else echo "make test: chromium is missing: install Debian's chromium (apt-get install chromium) or run as root"; exit 1; fi; }

# node runs the WebAssembly tests; install it from Debian when missing.
tools-node:
	@command -v node >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    echo "installing node from Debian (needed for the WebAssembly tests)"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq nodejs >/dev/null; \
	  else echo "make test: node is missing: install Debian's nodejs (apt-get install nodejs) or run as root"; exit 1; fi; }

# Benchmarks, side by side in one run: the engine's Go benchmarks natively
# and as WebAssembly under node (their output kept in .bench/ for the
# harness), then the harness (wasm/bench_harness_test.go): the page in
# chromium (edit to drawn, cold load, long tasks), grid evaluation against
# hand-written JavaScript and mathjs (installed from npm into .bench/), and
# the wasm size. It prints a table and writes bench.json; targets are
# reported, never enforced. Under node each benchmark runs for 2 s: node
# runs new code in its baseline tier and optimises what runs long, so in
# 200 ms the 2-D banana read 97.6 ms an analysis against 9.5 optimised.
bench: wasm tools-node tools-chromium
	@mkdir -p .bench
	@command -v npm >/dev/null 2>&1 || { \
	  if [ "$$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then \
	    echo "installing npm from Debian (the harness installs mathjs with it)"; \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq npm >/dev/null; \
	  else echo "make bench: npm is missing: mathjs will not be measured"; fi; }
	$(GO) test -run='^$$' -bench=. -benchmem -benchtime=200ms ./engine/... >.bench/engine-native.txt 2>&1; \
	  s=$$?; cat .bench/engine-native.txt; exit $$s
	GOOS=js GOARCH=wasm $(GO) test -run='^$$' -bench=. -benchmem -benchtime=2s -exec="$(WASM_EXEC)" ./engine/... >.bench/engine-wasm.txt 2>&1; \
	  s=$$?; cat .bench/engine-wasm.txt; exit $$s
	BELLCHECK_CHROMIUM=$$(command -v chromium) $(GO) test -count=1 -v -timeout=40m -tags=benchharness -run='^TestBenchHarness$$' ./wasm/

# Each fuzz target, as package:Target.
FUZZ_TARGETS := ./engine/model:FuzzParse ./engine/eval:FuzzCompile ./app/share:FuzzDecode ./engine:FuzzAnalyse ./engine/data:FuzzDataFile ./engine/paramopt:FuzzLines

fuzz:
	@for t in $(FUZZ_TARGETS); do \
	  pkg=$${t%%:*}; name=$${t##*:}; \
	  echo "fuzzing $$name in $$pkg for $(FUZZTIME)"; \
	  $(GO) test -run='^$$' -fuzz="^$$name\$$" -fuzztime=$(FUZZTIME) $$pkg/ || exit 1; \
	done

clean:
	rm -rf bin dist web/app.wasm .cache/goapp .cache/wasm.mod .cache/wasm.sum
