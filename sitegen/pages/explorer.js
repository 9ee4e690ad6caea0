/* sitegen explorer runtime (our own code, no library). The page's generated prelude
   defines MODEL (numbers only), rate(x, p) and slope(x, p) (printed from SymPy) and
   calls sitegenExplorer(MODEL, rate, slope). Every text the reader sees comes from
   the panel's markup (escaped by the page) or from the numbers computed here; the DOM
   is only touched through createElement(NS), setAttribute and textContent.
   Units: the state in the state unit, time in the model's time unit, parameters in
   their own units. */
function sitegenExplorer(MODEL, rate, slope) {
  "use strict";
  var doc = document;
  var SVG = "http://www.w3.org/2000/svg";
  var low = MODEL.region[0], high = MODEL.region[1], width = high - low;
  var GRID = 256; /* cells of the sign-change scan */
  var POSITIVE = 1e-9; /* of the width: closer to the lower end is not a positive state */
  var MERGE = 1e-10; /* of the width: roots closer than this are one */
  var LEVER_STEPS = 48; /* continuation steps across the lever's whole range */
  var values = MODEL.values.slice();
  var grid = [];
  for (var i = 0; i <= GRID; i++) grid.push(low + (width * i) / GRID);
  grid[GRID] = high;

  function el(id) { return doc.getElementById(id); }
  function text(id) { var e = el(id); return e ? e.textContent : ""; }

  /* -- numbers as a reader sees them: 3 significant figures, comma thousands,
        U+2212 minus, powers of ten below 1e-4 and from 1e9 (as pages/wording.py) -- */
  var SUP = { "0": "\u2070", "1": "\u00b9", "2": "\u00b2", "3": "\u00b3", "4": "\u2074",
    "5": "\u2075", "6": "\u2076", "7": "\u2077", "8": "\u2078", "9": "\u2079", "-": "\u207b" };
  function plain(s) {
    var parts = s.split(".");
    var whole = parts[0].replace(/\B(?=(\d{3})+(?!\d))/g, ",");
    var dec = parts.length > 1 ? parts[1].replace(/0+$/, "") : "";
    return dec ? whole + "." + dec : whole;
  }
  function num(v) {
    if (v === null || v !== v) return "not available";
    if (!isFinite(v)) return v > 0 ? "unbounded" : "\u2212unbounded";
    var r = Number(v.toPrecision(3));
    if (r === 0) return "0";
    var sign = r < 0 ? "\u2212" : "";
    r = Math.abs(r);
    if (r < 1e-4 || r >= 1e9) {
      var e = r.toExponential(2).split("e");
      var pow = String(Number(e[1])).replace(/[-0-9]/g, function (c) { return SUP[c]; });
      return sign + plain(e[0]) + " \u00d7 10" + pow;
    }
    return sign + plain(r >= 1e3 ? String(Math.round(r)) : r.toPrecision(3));
  }
  function qty(v, unit) { return unit ? num(v) + " " + unit : num(v); }

  /* -- the rate, with the lower end read from just inside where it is undefined -- */
  function F(x, p) {
    var v = rate(x, p);
    if (v !== v && x <= low) v = rate(low + 1e-12 * width, p);
    return v;
  }
  function G(x, p) {
    var v = slope(x, p);
    if (!isFinite(v) && x <= low) v = slope(low + 1e-12 * width, p);
    return v;
  }
  function bisect(fn, a, b, p) {
    var fa = fn(a, p);
    for (var k = 0; k < 200; k++) {
      var m = 0.5 * (a + b);
      if (m <= a || m >= b) break;
      var fm = fn(m, p);
      if (fm === 0) return m;
      if ((fm < 0) === (fa < 0)) { a = m; fa = fm; } else { b = m; }
    }
    return 0.5 * (a + b);
  }
  function polish(x, a, b, p) { /* Newton steps kept inside the bracket */
    for (var k = 0; k < 3; k++) {
      var d = G(x, p), y = x - F(x, p) / d;
      if (!(y > a && y < b) || !isFinite(y)) break;
      if (Math.abs(F(y, p)) > Math.abs(F(x, p))) break;
      x = y;
    }
    return x;
  }

  /* -- equilibria: sign changes of f, plus humps found by sign changes of f_x (two
        close roots or a double root inside one cell, as at a fold) -- */
  function equilibria(p) {
    var fs = [], gs = [], fscale = 0, gscale = 0, roots = [];
    for (var i = 0; i <= GRID; i++) {
      fs.push(F(grid[i], p)); gs.push(G(grid[i], p));
      if (isFinite(fs[i])) fscale = Math.max(fscale, Math.abs(fs[i]));
      if (isFinite(gs[i])) gscale = Math.max(gscale, Math.abs(gs[i]));
    }
    if (!(fscale > 0)) fscale = 1;
    if (rate(low, p) !== rate(low, p) && Math.abs(fs[0]) < 1e-9 * fscale) roots.push(low);
    for (i = 0; i < GRID; i++) {
      var a = grid[i], b = grid[i + 1], fa = fs[i], fb = fs[i + 1];
      if (!isFinite(fa) || !isFinite(fb)) continue;
      if (fa === 0) { roots.push(a); continue; }
      if (fa * fb < 0) { roots.push(polish(bisect(F, a, b, p), a, b, p)); continue; }
      if (fb !== 0 && gs[i] * gs[i + 1] < 0) {
        var xm = bisect(G, a, b, p), fm = F(xm, p);
        if (Math.abs(fm) <= 1e-13 * fscale) roots.push(xm);
        else if (fm * fa < 0) roots.push(bisect(F, a, xm, p), bisect(F, xm, b, p));
      }
    }
    if (fs[GRID] === 0) roots.push(high);
    roots.sort(function (u, v) { return u - v; });
    var found = [];
    for (i = 0; i < roots.length; i++) {
      if (found.length && roots[i] - found[found.length - 1].value <= MERGE * width) continue;
      found.push(classify(roots[i], p, fscale));
    }
    found.fscale = fscale; found.gscale = gscale; found.fs = fs;
    return found;
  }
  function classify(x, p, fscale) {
    var d = G(x, p), kind;
    if (isFinite(d) && Math.abs(d) * width > 1e-9 * fscale) kind = d < 0 ? "stable" : "unstable";
    else { /* a vanishing slope: read the flow on both sides */
      var h = 1e-6 * width;
      var below = x - h >= low ? F(x - h, p) : -F(x + h, p), above = F(Math.min(x + h, high), p);
      kind = below > 0 && above < 0 ? "stable" : below < 0 && above > 0 ? "unstable" : "semi-stable";
    }
    return { value: x, slope: d, stability: kind, positive: x > low + POSITIVE * width };
  }
  /* The equilibrium a start flows to (a 1-D flow stops at the first one it meets);
     null when it leaves through an end of the region without meeting one. */
  function attractorOf(x0, eqs, p) {
    for (var i = 0; i < eqs.length; i++) if (Math.abs(eqs[i].value - x0) <= MERGE * width) return eqs[i];
    var f0 = F(x0, p), best = null;
    for (i = 0; i < eqs.length; i++) {
      var e = eqs[i];
      if (f0 > 0 && e.value > x0 && (!best || e.value < best.value)) best = e;
      if (f0 < 0 && e.value < x0 && (!best || e.value > best.value)) best = e;
    }
    return best;
  }
  function stablePositive(eqs) { return eqs.filter(function (e) { return e.stability === "stable" && e.positive; }); }
  /* The stable state the system is in: today's state's attractor, else (as stage 4
     does) the largest stable positive state, or the lowest one when lower is better. */
  function heldState(eqs, p) {
    var c = stablePositive(eqs).filter(goodSide);
    var a = MODEL.current === null ? null : attractorOf(MODEL.current, eqs, p);
    if (a && c.indexOf(a) >= 0) return a;
    if (!c.length) return null;
    return MODEL.better === "lower" ? c[0] : c[c.length - 1];
  }
  /* The protected side: the scenario's own held state (at the scenario's values) and
     everything on its side of the threshold next to it; a state across that threshold
     (the turbid lake, the collapsed colony) is not "held", it is the flip. */
  var side = { lo: -Infinity, hi: Infinity };
  function goodSide(e) { return MODEL.better === "lower" ? e.value < side.hi : e.value > side.lo; }
  function basin(x, eqs) {
    var lo = low, hi = high;
    for (var i = 0; i < eqs.length; i++) {
      var v = eqs[i].value;
      if (v < x - MERGE * width && v > lo) lo = v;
      if (v > x + MERGE * width && v < hi) hi = v;
    }
    return { x: x, lo: lo, hi: hi };
  }

  /* -- the lever limit: follow the held stable state from one lever value to the next;
        it is kept while the start's attractor stays stable, positive and inside the old
        basin; where it is lost, bisect (the fold or the lower end) -- */
  function atLever(v) { var q = values.slice(); q[MODEL.lever] = v; return q; }
  function kept(ref, v) {
    var q = atLever(v), eqs = equilibria(q), a = attractorOf(ref.x, eqs, q);
    if (!a || a.stability !== "stable" || !a.positive || a.value <= ref.lo || a.value >= ref.hi) return null;
    return basin(a.value, eqs);
  }
  function lossToward(v0, ref, end) {
    var span = MODEL.ranges[MODEL.lever][1] - MODEL.ranges[MODEL.lever][0];
    var n = Math.max(1, Math.ceil((LEVER_STEPS * Math.abs(end - v0)) / span)), a = v0;
    for (var k = 1; k <= n; k++) {
      var b = k === n ? end : v0 + ((end - v0) * k) / n, next = kept(ref, b);
      if (next) { ref = next; a = b; continue; }
      for (var j = 0; j < 80 && Math.abs(b - a) > 1e-13 * span; j++) {
        var m = 0.5 * (a + b), at = kept(ref, m);
        if (at) { ref = at; a = m; } else b = m;
      }
      return { value: 0.5 * (a + b), state: ref.x };
    }
    return null;
  }
  function leverLimit(eqs) {
    if (MODEL.lever === null) return null;
    var today = values[MODEL.lever], range = MODEL.ranges[MODEL.lever];
    var held = heldState(eqs, values);
    if (held) {
      var ref = basin(held.value, eqs), found = [];
      var up = lossToward(today, ref, range[1]), down = lossToward(today, ref, range[0]);
      if (up) found.push({ value: up.value, margin: up.value - today, side: "largest" });
      if (down) found.push({ value: down.value, margin: today - down.value, side: "smallest" });
      found.sort(function (u, v) { return u.margin - v.margin; });
      return { today: today, limit: found.length ? found[0] : null, past: false };
    }
    /* Past the limit: find the nearest setting that holds a stable state, then the
       point between it and today where that state is lost. */
    var span = range[1] - range[0], best = null;
    [range[1], range[0]].forEach(function (end) {
      var n = Math.ceil((LEVER_STEPS * Math.abs(end - today)) / span);
      for (var k = 1; k <= n; k++) {
        var v = today + ((end - today) * k) / n, q = atLever(v), e = equilibria(q), h = heldState(e, q);
        if (!h) continue;
        var loss = lossToward(v, basin(h.value, e), today);
        if (loss && (!best || Math.abs(loss.value - today) < Math.abs(best.value - today)))
          best = { value: loss.value, margin: -Math.abs(loss.value - today), side: end > today ? "smallest" : "largest" };
        break;
      }
    });
    return { today: today, limit: best, past: true };
  }

  /* -- one trajectory from today's state: classic RK4, step from the local speed and
        the fastest rate of the region (so stiff models stay stable) -- */
  function trajectory(p, eqs, target) {
    var x = MODEL.current, t = 0, pts = [[0, x]], fate = "moving", tEvent = null;
    var tau = Math.min(width / eqs.fscale, eqs.gscale > 0 ? 1 / eqs.gscale : Infinity);
    var level = MODEL.collapse === null ? low : MODEL.collapse;
    var centre = target ? target.value : null;
    var band = centre === null ? 0 : 0.01 * (Math.abs(centre) > 0 ? Math.abs(centre) : width);
    var inside = function (y) { return Math.min(Math.max(y, low + 1e-12 * width), high); };
    var f = function (y) { return F(inside(y), p); };
    for (var n = 0; n < 20000; n++) {
      if (centre !== null && Math.abs(x - centre) <= band) {
        if (tEvent === null) tEvent = t;
        fate = target.positive ? "settles" : "collapse";
        if (t >= 1.25 * tEvent + tau) break;
      }
      var v = f(x);
      if (!isFinite(v)) break;
      var h = Math.min(0.05 * tau, (0.004 * width) / Math.max(Math.abs(v), 1e-300));
      var k1 = v, k2 = f(x + 0.5 * h * k1), k3 = f(x + 0.5 * h * k2), k4 = f(x + h * k3);
      var y = x + (h / 6) * (k1 + 2 * k2 + 2 * k3 + k4);
      if (y <= level && x > level) {
        tEvent = t + (h * (x - level)) / (x - y); fate = "collapse";
        pts.push([tEvent, level]); break;
      }
      if (y >= high && x < high) {
        tEvent = t + (h * (high - x)) / (y - x); fate = "leaves";
        pts.push([tEvent, high]); break;
      }
      t += h; x = y; pts.push([t, x]);
    }
    return { points: pts, fate: fate, time: tEvent };
  }

  /* -- drawing: rebuilt from DOM methods only -- */
  function node(parent, name, attrs, words) {
    var e = doc.createElementNS(SVG, name);
    for (var k in attrs) e.setAttribute(k, attrs[k]);
    if (words) e.textContent = words;
    parent.appendChild(e);
    return e;
  }
  function clear(e) { while (e.firstChild) e.removeChild(e.firstChild); }
  var PLOT = { left: 64, right: 590, top: 24, bottom: 206 };
  function axes(svg, xr, yr, xlabel, ylabel) {
    clear(svg);
    var sx = function (v) { return PLOT.left + ((v - xr[0]) / (xr[1] - xr[0])) * (PLOT.right - PLOT.left); };
    var sy = function (v) { return PLOT.bottom - ((v - yr[0]) / (yr[1] - yr[0])) * (PLOT.bottom - PLOT.top); };
    node(svg, "rect", { x: PLOT.left, y: PLOT.top, width: PLOT.right - PLOT.left, height: PLOT.bottom - PLOT.top, fill: "none", stroke: "#c9d0d7" });
    var small = { "font-size": "11", fill: "#55606c" };
    function label(x, y, anchor, words) { var a = Object.assign({ x: x, y: y, "text-anchor": anchor }, small); node(svg, "text", a, words); }
    label(PLOT.left, PLOT.bottom + 14, "middle", num(xr[0]));
    label(PLOT.right, PLOT.bottom + 14, "end", num(xr[1]));
    label(PLOT.left - 4, PLOT.bottom + 4, "end", num(yr[0]));
    label(PLOT.left - 4, PLOT.top + 8, "end", num(yr[1]));
    label((PLOT.left + PLOT.right) / 2, PLOT.bottom + 30, "middle", xlabel);
    label(PLOT.left, PLOT.top - 8, "start", ylabel);
    return { x: sx, y: sy };
  }
  function span(list) {
    var lo = Infinity, hi = -Infinity;
    list.forEach(function (v) { if (isFinite(v)) { lo = Math.min(lo, v); hi = Math.max(hi, v); } });
    if (!(hi > lo)) { lo = (isFinite(lo) ? lo : 0) - 1; hi = lo + 2; }
    return [lo, hi];
  }
  function drawRate(eqs) {
    var svg = el("explorer-rate-plot"); if (!svg) return;
    var yr = span(eqs.fs.concat([0]));
    var s = axes(svg, [low, high], yr, labels.state + (labels.unit ? " (" + labels.unit + ")" : ""), "rate of change (" + (labels.unit || "state") + " per " + labels.timeOne + ")");
    node(svg, "line", { x1: PLOT.left, x2: PLOT.right, y1: s.y(0), y2: s.y(0), stroke: "#1d232b", "stroke-width": "1" });
    var pts = [];
    for (var i = 0; i <= GRID; i++) if (isFinite(eqs.fs[i])) pts.push(s.x(grid[i]).toFixed(1) + "," + s.y(eqs.fs[i]).toFixed(1));
    node(svg, "polyline", { points: pts.join(" "), fill: "none", stroke: "#005a7a", "stroke-width": "2" });
    var edges = [low].concat(eqs.map(function (e) { return e.value; }), [high]);
    for (i = 0; i + 1 < edges.length; i++) { /* phase-line arrows between equilibria */
      var mid = 0.5 * (edges[i] + edges[i + 1]), dir = F(mid, values);
      if (!(Math.abs(s.x(edges[i + 1]) - s.x(edges[i])) > 14) || !dir) continue;
      var cx = s.x(mid), cy = s.y(0), d = dir > 0 ? 6 : -6;
      node(svg, "path", { d: "M" + (cx - d) + "," + (cy - 5) + "L" + (cx + d) + "," + cy + "L" + (cx - d) + "," + (cy + 5) + "Z", fill: "#55606c" });
    }
    if (MODEL.current !== null) {
      var cx2 = s.x(MODEL.current);
      node(svg, "line", { x1: cx2, x2: cx2, y1: PLOT.top, y2: PLOT.bottom, stroke: "#8a5a00", "stroke-dasharray": "4 3" });
      node(svg, "text", { x: cx2 + 3, y: PLOT.top + 10, "font-size": "11", fill: "#8a5a00" }, "today");
    }
    eqs.forEach(function (e) {
      var c = node(svg, e.stability === "semi-stable" ? "rect" : "circle", {}, null);
      var attrs = e.stability === "semi-stable"
        ? { x: s.x(e.value) - 5, y: s.y(0) - 5, width: 10, height: 10 }
        : { cx: s.x(e.value), cy: s.y(0), r: 5.5 };
      attrs.fill = e.stability === "stable" ? "#1d232b" : "#ffffff";
      attrs.stroke = "#1d232b"; attrs["stroke-width"] = "2";
      for (var k in attrs) c.setAttribute(k, attrs[k]);
    });
  }
  function drawTrajectory(run) {
    var svg = el("explorer-trajectory-plot"); if (!svg) return;
    if (!run) { clear(svg); return; }
    var pts = run.points, last = pts[pts.length - 1][0] || 1;
    var yr = span(pts.map(function (q) { return q[1]; })), pad = 0.08 * (yr[1] - yr[0]);
    yr = [Math.max(low, yr[0] - pad), Math.min(high, yr[1] + pad)];
    if (!(yr[1] > yr[0])) yr = [low, high];
    var s = axes(svg, [0, last], yr, "time (" + labels.time + ")", labels.state);
    var every = Math.max(1, Math.floor(pts.length / 400)), out = [];
    for (var i = 0; i < pts.length; i += every) out.push(s.x(pts[i][0]).toFixed(1) + "," + s.y(pts[i][1]).toFixed(1));
    var end = pts[pts.length - 1];
    out.push(s.x(end[0]).toFixed(1) + "," + s.y(end[1]).toFixed(1));
    node(svg, "polyline", { points: out.join(" "), fill: "none", stroke: "#005a7a", "stroke-width": "2" });
  }

  /* -- readouts -- */
  var labels = {
    state: text("explorer-state-name"), unit: text("explorer-state-unit"),
    time: text("explorer-time-words"), timeOne: text("explorer-time-word"),
    lever: text("explorer-lever-name"),
    leverUnit: text("explorer-lever-unit")
  };
  function say(id, words, data) {
    var e = el(id); if (!e) return;
    e.textContent = words;
    for (var k in data || {}) e.setAttribute("data-" + k, String(data[k]));
  }
  function sentence(eqs, run) {
    var stable = stablePositive(eqs), name = labels.state;
    var when = run && run.time !== null ? " in about " + num(run.time) + " " + labels.time : "";
    if (!run) {
      if (!stable.length) return ["No stable positive state at these values.", "collapse"];
      return ["At these values the " + name + " can rest at " + stable.map(function (e) { return qty(e.value, labels.unit); }).join(" or ") + ".", "settles"];
    }
    if (run.fate === "collapse") {
      if (!stable.length) return ["No stable positive state: collapse" + when + ".", "collapse"];
      return ["From today's state the " + name + " falls to the lower end" + when + ", below the threshold that divides it from the stable state at " + qty(stable[stable.length - 1].value, labels.unit) + ".", "collapse"];
    }
    if (run.fate === "leaves") return ["At these values the " + name + " grows past the top of the region (" + qty(high, labels.unit) + ")" + when + ".", "leaves"];
    if (run.fate === "settles") {
      var end = run.points[run.points.length - 1][1], target = attractorOf(MODEL.current, eqs, values);
      var v = target ? target.value : end, lower = MODEL.better === "lower";
      var flip = lower ? v >= side.hi : v <= side.lo;
      var verb = !flip ? " settles at " : lower ? " flips up to the high state at " : " drops to the low state at ";
      return ["At these values the " + name + verb + qty(v, labels.unit) + (when ? " (within 1%" + when + ")" : "") + ".", flip ? (lower ? "flips" : "drops") : "settles"];
    }
    return ["At these values the " + name + " is still changing at the end of the run.", "moving"];
  }
  (function () {
    var eqs = equilibria(MODEL.values), held = heldState(eqs, MODEL.values);
    if (held) { var b = basin(held.value, eqs); side = { lo: b.lo, hi: b.hi }; }
  })();
  function update() {
    var eqs = equilibria(values);
    var list = el("explorer-equilibria");
    if (list) {
      clear(list);
      if (!eqs.length) { var none = doc.createElement("li"); none.textContent = "none in the region"; list.appendChild(none); }
      eqs.forEach(function (e) {
        var li = doc.createElement("li");
        li.textContent = qty(e.value, labels.unit) + ": " + e.stability;
        li.setAttribute("data-value", String(e.value));
        li.setAttribute("data-stability", e.stability);
        list.appendChild(li);
      });
    }
    var stable = stablePositive(eqs), target = MODEL.current === null ? null : attractorOf(MODEL.current, eqs, values);
    var run = MODEL.current === null ? null : trajectory(values, eqs, target);
    var words = sentence(eqs, run);
    say("explorer-sentence", words[0], { fate: words[1], time: run && run.time !== null ? run.time : "", stable: stable.length });
    var lim = leverLimit(eqs);
    if (lim) {
      var u = labels.leverUnit, head = "Today's " + labels.lever + ": " + qty(lim.today, u) + ". ";
      if (!lim.limit) say("explorer-lever", head + (lim.past ? "No setting in the range holds a stable positive state." : "The stable state holds over the whole range."), { limit: "", margin: "", past: lim.past });
      else {
        var word = lim.limit.side === "largest" ? "largest safe setting " : "smallest safe setting ";
        var pct = lim.limit.value !== 0 ? " (" + num((100 * Math.abs(lim.limit.margin)) / Math.abs(lim.limit.value)) + "%)" : "";
        var tail = lim.past ? "past the limit by " + qty(-lim.limit.margin, u) + pct + "." : "margin " + qty(lim.limit.margin, u) + pct + ".";
        say("explorer-lever", head + "Lever limit (" + word + "before the held stable state vanishes): " + qty(lim.limit.value, u) + "; " + tail, { limit: lim.limit.value, margin: lim.limit.margin, past: lim.past });
      }
    }
    drawRate(eqs);
    drawTrajectory(run);
  }

  /* -- controls: a slider and a number field per ranged parameter, kept in step -- */
  function bind(index) {
    var slider = el("explorer-range-" + index), field = el("explorer-number-" + index), reset = el("explorer-reset-" + index);
    var k = Number(slider.getAttribute("data-parameter")), lo = Number(slider.min), hi = Number(slider.max);
    function set(v, source) {
      if (!(v >= lo && v <= hi)) { field.setAttribute("aria-invalid", "true"); return; }
      field.removeAttribute("aria-invalid");
      values[k] = v;
      if (source !== slider) slider.value = String(v);
      if (source !== field) field.value = String(Number(v.toPrecision(6)));
      update();
    }
    slider.addEventListener("input", function () { set(Number(slider.value), slider); });
    /* The slider is continuous (step "any"); keys move it from the exact current value. */
    var unit = Number(slider.getAttribute("data-step")), keys = { ArrowRight: 1, ArrowUp: 1,
      ArrowLeft: -1, ArrowDown: -1, PageUp: 10, PageDown: -10 };
    slider.addEventListener("keydown", function (event) {
      var v = event.key === "Home" ? lo : event.key === "End" ? hi : null;
      if (v === null && keys[event.key]) v = Math.min(hi, Math.max(lo, values[k] + keys[event.key] * unit));
      if (v === null) return;
      event.preventDefault();
      set(v, null);
    });
    field.addEventListener("input", function () { if (field.value !== "") set(Number(field.value), field); });
    field.addEventListener("change", function () { set(Number(field.value), field); });
    reset.addEventListener("click", function () { set(MODEL.values[k], null); });
  }
  var controls = doc.querySelectorAll("input[type=range][id^=explorer-range-]");
  for (var c = 0; c < controls.length; c++) bind(c);
  var all = el("explorer-reset-all");
  if (all) all.addEventListener("click", function () {
    values = MODEL.values.slice();
    for (var j = 0; j < controls.length; j++) {
      var k = Number(controls[j].getAttribute("data-parameter"));
      controls[j].value = String(values[k]);
      el("explorer-number-" + j).value = String(values[k]);
    }
    update();
  });
  var notice = el("explorer-needs-script");
  if (notice) notice.parentNode.removeChild(notice);
  var body = el("explorer-body");
  if (body) body.hidden = false;
  update();
  return { update: update, equilibria: function () { return equilibria(values); } };
}
