// Sizes the bellcheck frames of a page from the height messages they send.
//
// A bellcheck calculator in the embed view posts {bellcheck: "height",
// value: N} to its parent page whenever its content height changes. This
// script accepts a message only when
//   - it comes from a frame of this page marked data-bellcheck (event.source
//     is that frame's window),
//   - its origin is the origin of that frame's address (event.origin), and
//   - it has exactly that shape, with a whole number of pixels in a sane
//     range;
// everything else is ignored. It sets no HTML and runs nothing it receives.
(function () {
  "use strict";

  var MIN_HEIGHT = 120;
  var MAX_HEIGHT = 20000;

  function frames() {
    return Array.prototype.slice.call(document.querySelectorAll("iframe[data-bellcheck]"));
  }

  function originOf(frame) {
    try {
      return new URL(frame.getAttribute("src"), document.baseURI).origin;
    } catch (e) {
      return null;
    }
  }

  function isHeightMessage(data) {
    if (typeof data !== "object" || data === null || Array.isArray(data)) {
      return false;
    }
    var keys = Object.keys(data);
    return keys.length === 2 &&
      data.bellcheck === "height" &&
      typeof data.value === "number" &&
      Number.isInteger(data.value) &&
      data.value >= 0 && data.value <= MAX_HEIGHT;
  }

  window.addEventListener("message", function (event) {
    var list = frames();
    for (var i = 0; i < list.length; i++) {
      var frame = list[i];
      if (event.source !== frame.contentWindow) {
        continue;
      }
      if (event.origin !== originOf(frame) || !isHeightMessage(event.data)) {
        return;
      }
      frame.style.height = Math.max(MIN_HEIGHT, event.data.value) + "px";
      return;
    }
  });
})();
