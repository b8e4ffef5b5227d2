// Drawing only: the server computes every number; this file turns them into inline SVG.
"use strict";

var Draw = (function () {
  var NS = "http://www.w3.org/2000/svg";

  function el(name, attrs, text) {
    var node = document.createElementNS(NS, name);
    Object.keys(attrs || {}).forEach(function (k) { node.setAttribute(k, attrs[k]); });
    if (text !== undefined) node.textContent = text;
    return node;
  }

  // Tick positions at 1, 2 or 5 times a power of ten (placement of labels, not statistics).
  function ticks(lo, hi, count) {
    var raw = (hi - lo) / Math.max(count, 1);
    if (!(raw > 0)) return [lo];
    var power = Math.pow(10, Math.floor(Math.log10(raw)));
    var step = [1, 2, 5, 10].map(function (m) { return m * power; })
      .find(function (s) { return s >= raw; });
    var out = [];
    for (var t = Math.ceil(lo / step) * step; t <= hi + step * 1e-9; t += step) {
      out.push(Math.abs(t) < step * 1e-9 ? 0 : t);
    }
    return out;
  }

  function label(v) {
    var a = Math.abs(v);
    if (a !== 0 && (a >= 1e5 || a < 1e-3)) return v.toExponential(1);
    return String(Number(v.toPrecision(4)));
  }

  // spec: {x: [...], curves: [{y, cls, name}], bars: {edges, heights} | null,
  //        marks: [{x, name}], xlabel, width, height}
  function chart(svg, spec) {
    while (svg.firstChild) svg.removeChild(svg.firstChild);
    var W = spec.width || 640, H = spec.height || 300;
    svg.setAttribute("viewBox", "0 0 " + W + " " + H);
    // the legend in rows above the plot, clear of the marks' labels (text width estimated)
    var legend = [], lx = 46, row = 0;
    (spec.curves || []).filter(function (c) { return c.name; }).forEach(function (c) {
      var w = 40 + 7.5 * c.name.length;
      if (lx > 46 && lx + w > W - 14) { lx = 46; row += 1; }
      legend.push({c: c, x: lx, y: 14 + 20 * row});
      lx += w;
    });
    var m = {l: 46, r: 14, t: legend.length ? 62 + 20 * row : 38, b: 48};
    var xs = (spec.x || []).filter(function (v) { return v !== null; });
    if (spec.bars) xs = xs.concat(spec.bars.edges);
    (spec.marks || []).forEach(function (k) { xs.push(k.x); });
    if (!xs.length) {
      svg.appendChild(el("text", {x: W / 2, y: H / 2, "text-anchor": "middle"},
        spec.empty || "State your belief to see it drawn here."));
      return;
    }
    var x0 = Math.min.apply(null, xs), x1 = Math.max.apply(null, xs);
    if (x1 === x0) { x0 -= 1; x1 += 1; }
    var ys = [0];
    (spec.curves || []).forEach(function (c) {
      c.y.forEach(function (v) { if (v !== null && isFinite(v)) ys.push(v); });
    });
    if (spec.bars) ys = ys.concat(spec.bars.heights.filter(function (v) { return v !== null; }));
    var y1 = Math.max.apply(null, ys) * 1.08 || 1;
    function px(v) { return m.l + (v - x0) / (x1 - x0) * (W - m.l - m.r); }
    function py(v) { return H - m.b - v / y1 * (H - m.t - m.b); }

    ticks(x0, x1, W > 500 ? 7 : 4).forEach(function (t) {
      svg.appendChild(el("line", {x1: px(t), x2: px(t), y1: m.t, y2: H - m.b, "class": "grid"}));
      svg.appendChild(el("text", {x: px(t), y: H - m.b + 17, "text-anchor": "middle"}, label(t)));
    });
    if (x0 < 0 && x1 > 0) {
      svg.appendChild(el("line", {x1: px(0), x2: px(0), y1: m.t, y2: H - m.b, "class": "zero"}));
    }
    svg.appendChild(el("line", {x1: m.l, x2: W - m.r, y1: H - m.b, y2: H - m.b, "class": "axis"}));
    var xlabel = spec.xlabel || "";  // smaller type where the label would run past the edge
    var size = Math.min(15, (W - m.l - m.r) / (0.56 * Math.max(xlabel.length, 1)));
    var xtext = el("text", {x: (m.l + W - m.r) / 2, y: H - 8, "text-anchor": "middle"}, xlabel);
    xtext.style.fontSize = size.toFixed(1) + "px";  // through the CSSOM: the CSP allows it
    svg.appendChild(xtext);
    svg.appendChild(el("text", {x: 12, y: (m.t + H - m.b) / 2, "text-anchor": "middle",
      transform: "rotate(-90 12 " + (m.t + H - m.b) / 2 + ")"}, "density"));

    if (spec.bars) {
      spec.bars.heights.forEach(function (h, i) {
        if (!h) return;
        var a = px(spec.bars.edges[i]), b = px(spec.bars.edges[i + 1]);
        svg.appendChild(el("rect", {x: a, y: py(h), width: Math.max(b - a, 0),
          height: H - m.b - py(h), "class": "bar"}));
      });
    }
    (spec.curves || []).forEach(function (c) {
      var pts = [];
      c.y.forEach(function (v, i) {
        if (v !== null && spec.x[i] !== null) pts.push(px(spec.x[i]).toFixed(1) + "," + py(v).toFixed(1));
      });
      if (!pts.length) return;
      if (c.cls === "fit") {
        var first = pts[0].split(","), last = pts[pts.length - 1].split(",");
        var area = "M" + first[0] + "," + py(0) + " L" + pts.join(" L") + " L" + last[0] + "," + py(0) + " Z";
        svg.appendChild(el("path", {d: area, "class": "fit"}));
      } else {
        svg.appendChild(el("polyline", {points: pts.join(" "), "class": c.cls}));
      }
    });
    (spec.marks || []).forEach(function (k, i) {
      svg.appendChild(el("line", {x1: px(k.x), x2: px(k.x), y1: m.t, y2: H - m.b, "class": "mark"}));
      svg.appendChild(el("text", {x: px(k.x), y: m.t - 6 - (i % 2) * 14, "text-anchor": "middle",
        "class": "legend"}, k.name));
    });
    legend.forEach(function (item) {
      svg.appendChild(el("line", {x1: item.x, x2: item.x + 22, y1: item.y, y2: item.y,
        "class": item.c.cls === "fit" ? "fitline" : item.c.cls}));
      svg.appendChild(el("text", {x: item.x + 28, y: item.y + 5, "class": "legend"}, item.c.name));
    });
  }

  return {chart: chart};
})();
