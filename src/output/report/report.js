/* roadtally report: zoom, pan, search and info panel for the map; the searchable, sortable,
   paged segment table. Ours, no library, no network. Reads the JSON block #report-data and
   writes only text (textContent), never markup. A URL fragment #find=<id or route> runs a
   search on load. */
(function () {
  "use strict";
  var block = document.getElementById("report-data");
  if (!block) { return; }
  var D = JSON.parse(block.textContent);
  var COL = {};
  D.columns.forEach(function (n, i) { COL[n] = i; });
  var SEGS = D.segments;
  var BASIS = {
    continuous: "permanent counter on the segment",
    short_count: "short count on the segment",
    estimated: "estimated (no count on the segment)"
  };

  function thousands(v) {
    if (v === null || v === undefined || !isFinite(v)) { return "–"; }
    var s = String(Math.round(Math.abs(v)));
    var out = "";
    while (s.length > 3) { out = "," + s.slice(-3) + out; s = s.slice(0, -3); }
    return (v < 0 ? "-" : "") + s + out;
  }
  function fixed(v, d) { return v === null || v === undefined ? "–" : v.toFixed(d); }
  function get(i, name) { return SEGS[i][COL[name]]; }
  function el(tag, text, cls) {
    var e = document.createElement(tag);
    if (text !== undefined && text !== null) { e.textContent = text; }
    if (cls) { e.className = cls; }
    return e;
  }
  function interval(i) {
    var lo = get(i, "aadt_lo95"), hi = get(i, "aadt_hi95");
    return lo === null || hi === null ? "–" : thousands(lo) + " – " + thousands(hi) + " veh/day";
  }
  document.querySelectorAll(".interactive").forEach(function (e) { e.hidden = false; });

  /* ---- map ---- */
  var svg = document.getElementById("map-main");
  var info = document.getElementById("map-info");
  var lines = [];
  var full = null, view = null, upk = 1, pinned = null;
  if (svg) {
    svg.querySelectorAll("#map-lines line").forEach(function (l) {
      lines[+l.getAttribute("data-i")] = l;
    });
    var b = svg.viewBox.baseVal;
    full = { x: b.x, y: b.y, w: b.width, h: b.height };
    view = { x: full.x, y: full.y, w: full.w, h: full.h };
    upk = parseFloat(svg.getAttribute("data-km")) || 1;
    svg.classList.add("live");
  }
  var NS = svg ? svg.namespaceURI : null;

  function zoom() { return full.w / view.w; }
  function setView(v) {
    var w = Math.min(Math.max(v.w, full.w / 400), full.w * 1.5);
    var h = w * full.h / full.w;
    var cx = v.x + v.w / 2, cy = v.y + v.h / 2;
    view = { x: cx - w / 2, y: cy - h / 2, w: w, h: h };
    svg.setAttribute("viewBox", [view.x, view.y, view.w, view.h].map(function (n) { return n.toFixed(3); }).join(" "));
    var z = zoom();
    svg.querySelectorAll("#map-markers circle").forEach(function (c) {
      c.setAttribute("r", ((c.classList.contains("m-cont") ? 4.5 : 3) / z).toFixed(4));
    });
    drawScale();
  }
  function zoomAt(f, cx, cy) {
    setView({ x: cx - (cx - view.x) / f, y: cy - (cy - view.y) / f, w: view.w / f, h: view.h / f });
  }
  function toView(e) {
    var r = svg.getBoundingClientRect();
    return { x: view.x + (e.clientX - r.left) / r.width * view.w, y: view.y + (e.clientY - r.top) / r.height * view.h };
  }
  function drawScale() {
    var g = document.getElementById("map-scale");
    if (!g) { return; }
    var z = zoom();
    var want = 0.2 * view.w / upk, p = Math.pow(10, Math.floor(Math.log10(want)));
    var km = [5, 2, 1].map(function (m) { return m * p; }).filter(function (x) { return x <= want; })[0] || p;
    var len = km * upk, px = 1 / z;
    var x = view.x + 14 * px, y = view.y + view.h - 14 * px;
    while (g.firstChild) { g.removeChild(g.firstChild); }
    function add(tag, attrs, text) {
      var e = document.createElementNS(NS, tag);
      Object.keys(attrs).forEach(function (k) { e.setAttribute(k, attrs[k]); });
      if (text) { e.textContent = text; }
      g.appendChild(e);
    }
    add("rect", { x: x - 6 * px, y: y - 16 * px, width: len + 12 * px, height: 22 * px, fill: "#fff", "fill-opacity": "0.8" });
    add("line", { x1: x, y1: y, x2: x + len, y2: y, stroke: "#222", "stroke-width": 2 });
    add("line", { x1: x, y1: y - 4 * px, x2: x, y2: y, stroke: "#222", "stroke-width": 1 });
    add("line", { x1: x + len, y1: y - 4 * px, x2: x + len, y2: y, stroke: "#222", "stroke-width": 1 });
    add("text", { x: x, y: y - 5 * px, "font-size": 12 * px, fill: "#333" }, km >= 1 ? km + " km" : Math.round(km * 1000) + " m");
  }
  function ends(i) {
    var l = lines[i];
    return l ? ["x1", "y1", "x2", "y2"].map(function (a) { return parseFloat(l.getAttribute(a)); }) : null;
  }
  function highlight(list) {
    var g = document.getElementById("map-sel");
    while (g.firstChild) { g.removeChild(g.firstChild); }
    list.forEach(function (i) {
      var p = ends(i);
      if (!p) { return; }
      [["#111", 8], ["#ffd400", 4]].forEach(function (s) {
        var l = document.createElementNS(NS, "line");
        l.setAttribute("x1", p[0]); l.setAttribute("y1", p[1]);
        l.setAttribute("x2", p[2]); l.setAttribute("y2", p[3]);
        l.setAttribute("stroke", s[0]); l.setAttribute("stroke-width", s[1]);
        l.setAttribute("stroke-linecap", "round");
        l.setAttribute("data-i", i);
        g.appendChild(l);
      });
    });
  }
  function zoomTo(list) {
    var x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
    list.forEach(function (i) {
      var p = ends(i);
      if (!p) { return; }
      x0 = Math.min(x0, p[0], p[2]); x1 = Math.max(x1, p[0], p[2]);
      y0 = Math.min(y0, p[1], p[3]); y1 = Math.max(y1, p[1], p[3]);
    });
    if (!isFinite(x0)) { return; }
    // Room around the match: four times its extent, at least a quarter of the network.
    var w = Math.max(x1 - x0, (y1 - y0) * full.w / full.h) * 4;
    w = Math.max(w, full.w / 4);
    setView({ x: (x0 + x1) / 2 - w / 2, y: (y0 + y1) / 2 - w * full.h / full.w / 2, w: w, h: w * full.h / full.w });
  }
  function row(dl, term, value, key) {
    dl.appendChild(el("dt", term));
    var dd = el("dd", value);
    if (key) { dd.setAttribute("data-f", key); }
    dl.appendChild(dd);
  }
  function showSegment(i) {
    if (!info) { return; }
    info.textContent = "";
    var route = get(i, "route");
    info.appendChild(el("h3", "Segment " + get(i, "segment_id") + (route ? " · " + route : "")));
    var dl = el("dl", null, "figures");
    row(dl, "AADT", thousands(get(i, "aadt")) + " veh/day", "aadt");
    row(dl, "95 % interval", interval(i), "interval");
    row(dl, "Basis", BASIS[get(i, "basis")] || get(i, "basis"), "basis");
    row(dl, "Route", route || "–", "route");
    row(dl, "Class", get(i, "class") || "–", "class");
    row(dl, "Factor group", get(i, "group") || "–", "group");
    var hv = get(i, "heavy_pct");
    row(dl, "Heavy vehicles", hv === null ? "–" : fixed(hv, 1) + " % of AADT", "heavy");
    var k = get(i, "k_factor"), d = get(i, "d_factor");
    row(dl, "K-factor", k === null ? "–" : fixed(k, 4) + " (design hour ÷ AADT)", "k");
    row(dl, "D-factor", d === null ? "–" : fixed(d, 3) + " (heavier direction's share)", "d");
    var len = get(i, "length_km");
    row(dl, "Length", len === null ? "–" : fixed(len, 3) + " km", "length");
    row(dl, "Vehicle-km", len === null ? "–" : thousands(get(i, "aadt") * len) + " veh-km/day", "vkt");
    info.appendChild(dl);
  }
  function showList(title, list) {
    info.textContent = "";
    info.appendChild(el("h3", title));
    var vals = list.map(function (i) { return get(i, "aadt"); }).filter(function (v) { return v !== null; });
    if (vals.length) {
      info.appendChild(el("p", "AADT " + thousands(Math.min.apply(null, vals)) + " to " +
        thousands(Math.max.apply(null, vals)) + " veh/day over " + list.length + " segments. Choose one:"));
    }
    var ul = el("ul", null, "matches");
    list.slice(0, 40).forEach(function (i) {
      var li = el("li");
      var bt = el("button", get(i, "segment_id") + " · " + thousands(get(i, "aadt")) + " veh/day");
      bt.type = "button";
      bt.addEventListener("click", function () { select(i, true); });
      li.appendChild(bt);
      ul.appendChild(li);
    });
    info.appendChild(ul);
    if (list.length > 40) { info.appendChild(el("p", "… and " + (list.length - 40) + " more (see the table below).")); }
  }
  function select(i, zoomIn) {
    pinned = i;
    highlight([i]);
    showSegment(i);
    if (zoomIn) { zoomTo([i]); }
  }
  function search(q) {
    q = (q || "").trim().toLowerCase();
    if (!q || !svg) { return; }
    var id = COL.segment_id, rt = COL.route;
    var exact = [], route = [], part = [];
    SEGS.forEach(function (s, i) {
      var sid = String(s[id]).toLowerCase(), r = String(s[rt] || "").toLowerCase();
      if (sid === q) { exact.push(i); } else if (r === q) { route.push(i); } else if (sid.indexOf(q) >= 0 || r.indexOf(q) >= 0) { part.push(i); }
    });
    if (exact.length) { select(exact[0], true); return; }
    var list = route.length ? route : part;
    if (list.length === 1) { select(list[0], true); return; }
    if (!list.length) {
      pinned = null; highlight([]);
      info.textContent = "";
      info.appendChild(el("p", "No segment id or route matches “" + q + "”."));
      return;
    }
    pinned = null;
    highlight(list);
    zoomTo(list);
    showList((route.length ? "Route " : "Matches for ") + "“" + q + "”: " + list.length + " segments", list);
  }

  if (svg) {
    svg.addEventListener("wheel", function (e) {
      e.preventDefault();
      var p = toView(e);
      zoomAt(e.deltaY < 0 ? 1.25 : 0.8, p.x, p.y);
    }, { passive: false });
    var drag = null;
    svg.addEventListener("pointerdown", function (e) {
      drag = { x: e.clientX, y: e.clientY, vx: view.x, vy: view.y, moved: false, id: e.pointerId };
    });
    svg.addEventListener("pointermove", function (e) {
      if (!drag) { return; }
      var dx = e.clientX - drag.x, dy = e.clientY - drag.y;
      if (!drag.moved && Math.abs(dx) + Math.abs(dy) < 4) { return; }
      if (!drag.moved) { drag.moved = true; svg.setPointerCapture(drag.id); svg.classList.add("dragging"); }
      var r = svg.getBoundingClientRect();
      setView({ x: drag.vx - dx / r.width * view.w, y: drag.vy - dy / r.height * view.h, w: view.w, h: view.h });
    });
    function endDrag() {
      if (drag && drag.moved) { svg.classList.remove("dragging"); }
      setTimeout(function () { drag = null; }, 0);
    }
    svg.addEventListener("pointerup", endDrag);
    svg.addEventListener("pointercancel", endDrag);
    svg.addEventListener("mouseover", function (e) {
      var i = e.target.getAttribute("data-i");
      if (i !== null && pinned === null) { showSegment(+i); }
    });
    svg.addEventListener("click", function (e) {
      if (drag && drag.moved) { return; }
      var i = e.target.getAttribute("data-i");
      if (i !== null) { select(+i, false); } else { pinned = null; highlight([]); }
    });
    var on = function (id, f) { var b = document.getElementById(id); if (b) { b.addEventListener("click", f); } };
    on("map-zoom-in", function () { zoomAt(1.5, view.x + view.w / 2, view.y + view.h / 2); });
    on("map-zoom-out", function () { zoomAt(1 / 1.5, view.x + view.w / 2, view.y + view.h / 2); });
    on("map-reset", function () { setView(full); });
    [["map-show-cont", "hide-cont"], ["map-show-short", "hide-short"]].forEach(function (p) {
      var c = document.getElementById(p[0]);
      if (c) { c.addEventListener("change", function () { svg.classList.toggle(p[1], !c.checked); }); }
    });
    var form = document.getElementById("map-search");
    var input = document.getElementById("map-find");
    if (form && input) {
      form.addEventListener("submit", function (e) { e.preventDefault(); search(input.value); });
    }
    var fromHash = function () {
      var m = /(?:^#|&)find=([^&]*)/.exec(location.hash);
      if (m && input) {
        input.value = decodeURIComponent(m[1]);
        search(input.value);
      }
    };
    window.addEventListener("hashchange", fromHash);
    setView(full);
    fromHash();
  }

  /* ---- segment table ---- */
  var table = document.getElementById("seg-table");
  if (!table) { return; }
  var body = table.querySelector("tbody");
  var filter = document.getElementById("seg-filter");
  var status = document.getElementById("seg-status");
  var PAGE = 50;
  var state = { key: null, dir: 1, page: 0, rows: SEGS.map(function (_, i) { return i; }) };
  var note = document.getElementById("seg-static-note");
  if (note) { note.hidden = true; }
  function cellValues(i) {
    var hv = get(i, "heavy_pct"), k = get(i, "k_factor"), d = get(i, "d_factor"), len = get(i, "length_km");
    return [
      [get(i, "segment_id"), false], [get(i, "route") || "–", false], [get(i, "class") || "–", false],
      [get(i, "group") || "–", false], [get(i, "basis"), false],
      [thousands(get(i, "aadt")), true], [interval(i).replace(" veh/day", ""), true],
      [hv === null ? "–" : fixed(hv, 1), true], [k === null ? "–" : fixed(k, 4), true],
      [d === null ? "–" : fixed(d, 3), true], [len === null ? "–" : fixed(len, 3), true]
    ];
  }
  function render() {
    var n = state.rows.length, pages = Math.max(1, Math.ceil(n / PAGE));
    state.page = Math.min(state.page, pages - 1);
    var start = state.page * PAGE;
    body.textContent = "";
    state.rows.slice(start, start + PAGE).forEach(function (i) {
      var tr = el("tr");
      tr.setAttribute("data-i", i);
      cellValues(i).forEach(function (c) { tr.appendChild(el("td", c[0], c[1] ? "num" : "")); });
      body.appendChild(tr);
    });
    if (status) {
      status.textContent = n === 0 ? "No segment matches." :
        "Segments " + (start + 1) + "–" + Math.min(n, start + PAGE) + " of " + n +
        (n < SEGS.length ? " matching (" + SEGS.length + " in all)" : "") + ", page " + (state.page + 1) + " of " + pages;
    }
  }
  function refilter() {
    var q = filter ? filter.value.trim().toLowerCase() : "";
    var rows = [];
    SEGS.forEach(function (s, i) {
      if (!q) { rows.push(i); return; }
      var text = [s[COL.segment_id], s[COL.route], s[COL["class"]], s[COL.group], s[COL.basis]].join(" ").toLowerCase();
      if (text.indexOf(q) >= 0) { rows.push(i); }
    });
    state.rows = rows;
    sort();
  }
  function sort() {
    if (state.key !== null) {
      var k = COL[state.key], dir = state.dir;
      state.rows.sort(function (a, b) {
        var x = SEGS[a][k], y = SEGS[b][k];
        if (x === y) { return a - b; }
        if (x === null || x === "") { return 1; }
        if (y === null || y === "") { return -1; }
        var c = typeof x === "number" ? x - y : String(x).localeCompare(String(y), "en");
        return c === 0 ? a - b : dir * c;
      });
    }
    render();
  }
  table.querySelectorAll("th[data-key]").forEach(function (th) {
    var bt = el("button", null, "sort");
    while (th.firstChild) { bt.appendChild(th.firstChild); }
    bt.type = "button";
    th.appendChild(bt);
    bt.addEventListener("click", function () {
      var key = th.getAttribute("data-key");
      state.dir = state.key === key ? -state.dir : 1;
      state.key = key;
      table.querySelectorAll("th[data-key]").forEach(function (o) { o.removeAttribute("aria-sort"); });
      th.setAttribute("aria-sort", state.dir > 0 ? "ascending" : "descending");
      state.page = 0;
      sort();
    });
  });
  if (filter) { filter.addEventListener("input", function () { state.page = 0; refilter(); }); }
  var step = function (id, d) {
    var b = document.getElementById(id);
    if (b) { b.addEventListener("click", function () { state.page = Math.max(0, state.page + d); render(); }); }
  };
  step("seg-prev", -1);
  step("seg-next", 1);
  body.addEventListener("click", function (e) {
    var tr = e.target.closest("tr");
    if (!tr || !svg) { return; }
    select(+tr.getAttribute("data-i"), true);
    svg.scrollIntoView({ block: "center" });
  });
  render();
})();
