// headroom evidence report: map zoom, pan, tooltips and links to the
// evidence sheets. Everything works on the page's own elements; nothing is
// fetched. Without this script the map still shows (it is static SVG).
(function () {
  "use strict";
  var root = document.documentElement;
  root.classList.add("js");
  var svg = document.getElementById("map-svg");
  if (!svg || !svg.viewBox || !svg.viewBox.baseVal) {
    return;
  }
  var frame = document.getElementById("map-frame");
  var tip = document.getElementById("map-tip");
  var overlay = document.getElementById("map-overlay");
  var data = { l: [], m: [], h: [] };
  try {
    data = JSON.parse(document.getElementById("map-data").textContent);
  } catch (e) {
    // tooltips then show the ID only
  }

  var base = svg.viewBox.baseVal;
  var W = base.width, H = base.height, X0 = base.x, Y0 = base.y;
  var view = { x: X0, y: Y0, w: W, h: H };
  var MAX_ZOOM = 24;

  // The tooltip rows of each main and hydrant, in drawing order.
  var rows = new Map();
  svg.querySelectorAll("path.main").forEach(function (el, i) { rows.set(el, (data.m || [])[i] || []); });
  svg.querySelectorAll("g.hydrant").forEach(function (el, i) { rows.set(el, (data.h || [])[i] || []); });

  function round(v) { return Math.round(v * 100) / 100; }

  // niceFloor is the largest 1, 2 or 5 × 10^k not above x, as in the Go code.
  function niceFloor(x) {
    var p = Math.pow(10, Math.floor(Math.log10(x)));
    if (5 * p <= x * (1 + 1e-12)) { return 5 * p; }
    if (2 * p <= x * (1 + 1e-12)) { return 2 * p; }
    return p;
  }

  var scale = document.getElementById("map-scale");
  function redrawScale(zoom) {
    if (!scale) { return; }
    var perUnit = parseFloat(scale.getAttribute("data-per-unit")) * zoom;
    if (!(perUnit > 0)) { return; }
    var n = niceFloor(180 / perUnit);
    var len = n * perUnit;
    document.getElementById("map-scale-bar").setAttribute("width", round(len));
    document.getElementById("map-scale-half").setAttribute("width", round(len / 2));
    document.getElementById("map-scale-bg").setAttribute("width", round(len + 16));
    var digits = n < 1 ? Math.ceil(-Math.log10(n) - 1e-9) : 0;
    document.getElementById("map-scale-text").textContent =
      n.toLocaleString("en-US", { maximumFractionDigits: digits }) + " " + scale.getAttribute("data-unit");
  }

  function apply() {
    svg.setAttribute("viewBox", [view.x, view.y, view.w, view.h].map(round).join(" "));
    var zoom = W / view.w;
    // Markers keep about their size on screen as the map zooms.
    svg.style.setProperty("--mk", String(round(Math.pow(zoom, -0.85))));
    if (overlay) {
      overlay.setAttribute("transform", "translate(" + round(view.x - X0 / zoom) + " " + round(view.y - Y0 / zoom) + ") scale(" + round(1 / zoom * 1e4) / 1e4 + ")");
    }
    redrawScale(zoom);
  }

  // Keep at least half the view over the network.
  function clampPan() {
    view.x = Math.min(Math.max(view.x, X0 - view.w / 2), X0 + W - view.w / 2);
    view.y = Math.min(Math.max(view.y, Y0 - view.h / 2), Y0 + H - view.h / 2);
  }

  // zoomAt scales the view by factor about the point (cx, cy) in map units.
  function zoomAt(factor, cx, cy) {
    var zoom = Math.min(Math.max(W / view.w * factor, 1), MAX_ZOOM);
    var w = W / zoom, h = H / zoom;
    view.x = cx - (cx - view.x) * w / view.w;
    view.y = cy - (cy - view.y) * h / view.h;
    view.w = w;
    view.h = h;
    clampPan();
    apply();
  }

  function toMap(clientX, clientY) {
    var m = svg.getScreenCTM();
    if (!m) { return { x: view.x + view.w / 2, y: view.y + view.h / 2 }; }
    var p = new DOMPoint(clientX, clientY).matrixTransform(m.inverse());
    return { x: p.x, y: p.y };
  }

  function centre() { return { x: view.x + view.w / 2, y: view.y + view.h / 2 }; }

  function reset() {
    view = { x: X0, y: Y0, w: W, h: H };
    svg.classList.remove("focus");
    svg.querySelectorAll(".main.hl").forEach(function (el) { el.classList.remove("hl"); });
    apply();
  }

  svg.addEventListener("wheel", function (e) {
    var zoom = W / view.w;
    if (e.deltaY > 0 && zoom <= 1.0001) {
      return; // zoomed right out: let the page scroll on
    }
    e.preventDefault();
    var k = e.deltaMode === 1 ? 0.05 : e.deltaMode === 2 ? 1 : 0.0015;
    var p = toMap(e.clientX, e.clientY);
    zoomAt(Math.exp(-e.deltaY * k), p.x, p.y);
  }, { passive: false });

  document.getElementById("map-zoom-in").addEventListener("click", function () { var c = centre(); zoomAt(1.6, c.x, c.y); });
  document.getElementById("map-zoom-out").addEventListener("click", function () { var c = centre(); zoomAt(1 / 1.6, c.x, c.y); });
  document.getElementById("map-reset").addEventListener("click", reset);

  // Dragging pans. Capture starts only once the pointer has moved, so a
  // plain click still reaches the main under it.
  var drag = null, suppressClick = false;
  svg.addEventListener("pointerdown", function (e) {
    if (e.button !== 0) { return; }
    var m = svg.getScreenCTM();
    drag = { x: e.clientX, y: e.clientY, vx: view.x, vy: view.y, k: m ? 1 / m.a : 1, id: e.pointerId, moved: false };
  });
  svg.addEventListener("pointermove", function (e) {
    if (drag) {
      var dx = e.clientX - drag.x, dy = e.clientY - drag.y;
      if (!drag.moved && Math.abs(dx) + Math.abs(dy) < 4) { return; }
      if (!drag.moved) {
        drag.moved = true;
        svg.setPointerCapture(drag.id);
        svg.classList.add("dragging");
        hideTip();
      }
      view.x = drag.vx - dx * drag.k;
      view.y = drag.vy - dy * drag.k;
      clampPan();
      apply();
      return;
    }
    if (current) { place(e.clientX, e.clientY); }
  });
  function endDrag() {
    if (drag && drag.moved) {
      suppressClick = true;
      svg.classList.remove("dragging");
      setTimeout(function () { suppressClick = false; }, 0);
    }
    drag = null;
  }
  // A link's native drag would take the pointer from the pan.
  svg.addEventListener("dragstart", function (e) { e.preventDefault(); });
  svg.addEventListener("pointerup", endDrag);
  svg.addEventListener("pointercancel", endDrag);
  svg.addEventListener("click", function (e) {
    if (suppressClick) {
      e.preventDefault();
      e.stopPropagation();
      suppressClick = false;
    }
  }, true);

  // Tooltips.
  var current = null;
  // sheetOf is the evidence sheet a main's link points to (SVG links have
  // no .hash, so read the href).
  function sheetOf(a) {
    var h = a.getAttribute("href") || "";
    return h.charAt(0) === "#" ? decodeURIComponent(h.slice(1)) : "";
  }
  function target(node) {
    return node && node.closest ? node.closest(".main, .hydrant") : null;
  }
  function showTip(el, clientX, clientY) {
    current = el;
    tip.textContent = "";
    var head = document.createElement("strong");
    head.textContent = (el.classList.contains("hydrant") ? "Hydrant " : "Main ") + el.getAttribute("data-id");
    tip.appendChild(head);
    var list = rows.get(el) || [];
    if (list.length) {
      var dl = document.createElement("dl");
      list.forEach(function (r) {
        var dt = document.createElement("dt");
        dt.textContent = (data.l || [])[r[0]] || "";
        var dd = document.createElement("dd");
        dd.textContent = r[1];
        dl.appendChild(dt);
        dl.appendChild(dd);
        if (r[2]) {
          var note = document.createElement("dd");
          note.className = "tip-note";
          note.textContent = r[2];
          dl.appendChild(note);
        }
      });
      tip.appendChild(dl);
    }
    var link = el.closest("a");
    if (link) {
      var go = document.createElement("div");
      go.className = "tip-link";
      go.textContent = "Click for evidence sheet " + sheetOf(link);
      tip.appendChild(go);
    }
    tip.hidden = false;
    place(clientX, clientY);
  }
  function place(clientX, clientY) {
    var box = frame.getBoundingClientRect();
    var x = clientX - box.left + 16, y = clientY - box.top + 16;
    if (x + tip.offsetWidth > box.width - 6) { x = Math.max(6, clientX - box.left - tip.offsetWidth - 16); }
    if (y + tip.offsetHeight > box.height - 6) { y = Math.max(6, clientY - box.top - tip.offsetHeight - 16); }
    tip.style.left = Math.round(x) + "px";
    tip.style.top = Math.round(y) + "px";
  }
  function hideTip() {
    if (current) { current.classList.remove("hot"); }
    current = null;
    tip.hidden = true;
  }
  svg.addEventListener("pointerover", function (e) {
    if (drag && drag.moved) { return; }
    var el = target(e.target);
    if (el && el !== current) { showTip(el, e.clientX, e.clientY); }
  });
  svg.addEventListener("pointerout", function (e) {
    var el = target(e.target);
    if (el && el === current && !el.contains(e.relatedTarget)) { hideTip(); }
  });
  svg.addEventListener("focusin", function (e) {
    var el = target(e.target) || (e.target.querySelector && e.target.querySelector(".main, .hydrant"));
    if (!el) { return; }
    var r = el.getBoundingClientRect();
    showTip(el, r.left + r.width / 2, r.top + r.height / 2);
    el.classList.add("hot");
  });
  svg.addEventListener("focusout", hideTip);

  // "Show on the map": zoom to a sheet's mains and fade the others.
  function showSheet(id) {
    var els = [];
    svg.querySelectorAll(".mains a").forEach(function (a) {
      if (sheetOf(a) === id) {
        a.querySelectorAll(".main").forEach(function (el) { els.push(el); });
      }
    });
    reset();
    if (!els.length) { return; }
    var x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
    els.forEach(function (el) {
      el.classList.add("hl");
      var b = el.getBBox();
      x0 = Math.min(x0, b.x); y0 = Math.min(y0, b.y);
      x1 = Math.max(x1, b.x + b.width); y1 = Math.max(y1, b.y + b.height);
    });
    svg.classList.add("focus");
    var zoom = Math.min(W / Math.max(x1 - x0, 1) / 1.8, H / Math.max(y1 - y0, 1) / 1.8, 12);
    zoomAt(zoom, (x0 + x1) / 2, (y0 + y1) / 2);
    view.x = (x0 + x1) / 2 - view.w / 2;
    view.y = (y0 + y1) / 2 - view.h / 2;
    clampPan();
    apply();
  }
  document.querySelectorAll("a.onmap").forEach(function (a) {
    a.addEventListener("click", function () { showSheet(a.getAttribute("data-sheet")); });
  });

  apply();
})();
