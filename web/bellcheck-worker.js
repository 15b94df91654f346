// bellcheck's analysis worker: the page's own program (app.wasm), run in a
// dedicated worker so the analyses leave the page's thread free. The
// program sees no document and serves the page's requests instead of
// drawing the page (wasm/main_js.go). Both paths are relative to this
// file, so the site works under any path prefix; the browser has app.wasm
// in its cache already (the page loaded it).
"use strict";
importScripts("../wasm_exec.js");

(async () => {
  try {
    const go = new Go();
    const response = fetch("app.wasm");
    let result;
    try {
      result = await WebAssembly.instantiateStreaming(response, go.importObject);
    } catch (err) {
      // A server that sends app.wasm without its MIME type: compile the
      // bytes instead.
      const bytes = await (await fetch("app.wasm")).arrayBuffer();
      result = await WebAssembly.instantiate(bytes, go.importObject);
    }
    await go.run(result.instance);
    postMessage("exited");
  } catch (err) {
    postMessage("failed: " + err);
  }
})();
