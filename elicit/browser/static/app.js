// The browser interview's page: sends what the expert types, draws what the server answers.
// No number shown here is computed here: fits, densities, quantiles and words come from Python.
"use strict";

(function () {
  var TOKEN = document.querySelector('meta[name="elicit-token"]').content;
  var FIELDS = ["family", "df", "per", "low", "high", "mass", "quantile_set", "q0", "q1", "q2",
                "bin_low", "bin_high", "bin_count", "rationale", "units"];
  var state = null, current = null, chips = [], edges = [], timer = null, seq = 0;

  function $(id) { return document.getElementById(id); }
  function api(path, body) {
    var opts = {method: body ? "POST" : "GET", headers: {"X-Elicit-Token": TOKEN},
                cache: "no-store", credentials: "same-origin"};
    if (body) {
      opts.headers["Content-Type"] = "application/json";
      opts.body = JSON.stringify(body);
    }
    return fetch(path, opts).then(function (r) {
      return r.json().then(function (data) {
        if (!r.ok) throw new Error(data.error || ("status " + r.status));
        return data;
      });
    });
  }
  function status(text) { $("status").textContent = text || ""; }
  function fail(err) { status(String(err.message || err)); }
  function para(parent, text, cls) {
    var p = document.createElement("p");
    p.textContent = text;
    if (cls) p.className = cls;
    parent.appendChild(p);
  }
  function heading(parent, text) {
    var h = document.createElement("h3");
    h.textContent = text;
    parent.appendChild(h);
  }
  function storeKey(column) { return "elicit:" + state.out + ":" + column; }

  // ------------------------------------------------------------------ questions
  function load(column) {
    return api("/api/state").then(function (s) {
      state = s;
      $("study-title").textContent = s.title || ("Prior interview: " + s.response);
      $("out-path").textContent = s.out;
      var notes = $("data-notes");
      notes.textContent = "";
      (s.notes || []).forEach(function (t) { var li = document.createElement("li"); li.textContent = t; notes.appendChild(li); });
      if (!$("expert").value) $("expert").value = s.expert || "";
      var next = column || (s.items.find(function (i) { return !i.answered; }) || s.items[0]).column;
      select(next);
    }).catch(fail);
  }

  function renderNav() {
    var list = $("item-list");
    list.textContent = "";
    state.items.forEach(function (item) {
      var li = document.createElement("li");
      var b = document.createElement("button");
      b.type = "button";
      b.textContent = item.column === "noise" ? "noise sd" : item.column;
      var tag = document.createElement("span");
      tag.className = "state";
      tag.textContent = item.answered ? "saved" : "to state";
      b.appendChild(tag);
      if (item.answered) li.className = "done";
      if (current && item.column === current.column) b.setAttribute("aria-current", "true");
      b.addEventListener("click", function () { showScreen("question"); select(item.column); });
      li.appendChild(b);
      list.appendChild(li);
    });
  }

  // The conditional-means screen: one fieldset per reference row, its words from the server.
  function isBlock() { return current && current.column === "conditional"; }

  function drawRows() {
    var box = $("rows-set");
    box.textContent = "";
    current.rows.forEach(function (row, i) {
      var set = document.createElement("fieldset");
      var legend = document.createElement("legend");
      legend.textContent = row.title;
      set.appendChild(legend);
      para(set, row.values, "values");
      ["low", "high", "mass"].forEach(function (f) {
        var id = "row" + i + "." + f, div = document.createElement("div");
        div.className = "row";
        var label = document.createElement("label");
        label.htmlFor = id;
        label.textContent = row.prompts[f];
        var input = document.createElement("input");
        input.id = id; input.type = "text"; input.inputMode = "decimal"; input.autocomplete = "off";
        var err = document.createElement("span");
        err.className = "err"; err.id = "err-" + id; err.setAttribute("aria-live", "polite");
        [label, input, err].forEach(function (n) { div.appendChild(n); });
        set.appendChild(div);
      });
      box.appendChild(set);
    });
  }

  function restoreRows() {
    var kept = {};
    try { kept = JSON.parse(localStorage.getItem(storeKey(current.column)) || "{}"); } catch (e) { kept = {}; }
    $("rationale").value = (current.answered ? current.rationale : kept.rationale) || "";
    current.rows.forEach(function (row, i) {
      var typed = (kept.rows || [])[i] || {};
      ["low", "high", "mass"].forEach(function (f) {
        var v = current.answered ? row.saved[f] : typed[f];
        $("row" + i + "." + f).value = v !== undefined && v !== null ? String(v) : (f === "mass" ? "0.9" : "");
      });
    });
  }

  function renderBlock(view) {
    $("chart").parentNode.hidden = true;  // a correlated block: its words, no single curve
    var w = $("words");
    w.textContent = "";
    heading(w, view.words.heading);
    var pre = document.createElement("pre");
    pre.textContent = view.words.show.join("\n");
    w.appendChild(pre);
  }

  function method() {
    var checked = document.querySelector('input[name="method"]:checked');
    return current && current.column === "noise" ? "range" : (checked ? checked.value : "range");
  }

  function showMethod() {
    ["range", "quantiles", "bins"].forEach(function (m) { $(m + "-set").hidden = isBlock() || m !== method(); });
    $("df-row").hidden = $("family").value !== "student_t";
    var sets = state.quantile_sets[$("quantile_set").value];
    var names = sets.map(function (p) { return p === 0.5 ? "median" : (100 * p) + "% quantile"; });
    names.forEach(function (n, i) { $("q" + i + "-label").textContent = n; });
  }

  function select(column) {
    current = state.items.find(function (i) { return i.column === column; });
    renderNav();
    var noise = column === "noise", block = isBlock();
    $("rows-set").hidden = !block;
    $("chart").parentNode.hidden = block;
    $("q-title").textContent = current.title ? current.title : noise ? "Noise: the residual sd of " + state.response : column;
    $("q-describe").textContent = current.describe || "";
    $("method-set").hidden = noise || block;
    $("shape-set").hidden = noise || block;
    $("units-row").hidden = !current.units_prompt;  // asked once, where the file lacks them
    $("units-label").textContent = current.units_prompt || "Units";
    $("per-label").textContent = "Stated for a change in " + column + " of" + (current.units ? " (" + current.units + ")" : "");
    $("range-legend").textContent = noise ? "The range of the residual sd" + (state.response_units ? " (" + state.response_units + ")" : "")
      : "The range of the change in " + state.response;
    if (block) { drawRows(); restoreRows(); } else restoreForm(column);
    $("statement").querySelectorAll("input, select, button").forEach(function (n) {
      if (!n.closest(".who")) n.disabled = current.answered;
    });
    $("saved-note").textContent = current.answered ? "Saved in the prior file." : "";
    $("others-box").hidden = !(current.answered && !noise && !block);
    $("others-switch").checked = false;
    $("others-words").textContent = "";
    showErrors({});
    showMethod();
    if (current.answered && current.view) (block ? renderBlock : renderView)(current.view, []);
    else { renderEmpty(); schedule(); }  // never another question's picture meanwhile
  }

  // The saved statement, back in the form's fields (shown, not editable, once answered).
  function savedForm(view) {
    var mk = view.marks, form = {family: view.family, per: String(view.per), method: "range"};
    if (view.df !== null && view.df !== undefined) form.df = String(view.df);
    if (mk.kind === "range") {
      form.low = String(mk.low); form.high = String(mk.high); form.mass = String(mk.mass);
    } else if (mk.kind === "quantiles") {
      form.method = "quantiles";
      var probs = mk.points.map(function (p) { return p[0]; }).join(",");
      Object.keys(state.quantile_sets).forEach(function (key) {
        if (state.quantile_sets[key].join(",") !== probs) return;
        form.quantile_set = key;
        mk.points.forEach(function (p, i) { form["q" + i] = String(p[1]); });
      });
    } else if (mk.kind === "bins") {
      form.method = "bins";
      form.bin_low = String(mk.edges[0]);
      form.bin_high = String(mk.edges[mk.edges.length - 1]);
      form.bin_count = String(mk.edges.length - 1);
      form.chips = mk.chips.slice();
    }
    return form;
  }

  function restoreForm(column) {
    var saved = {};
    try { saved = JSON.parse(localStorage.getItem(storeKey(column)) || "{}"); } catch (e) { saved = {}; }
    if (current.answered && current.view) saved = savedForm(current.view);
    FIELDS.forEach(function (f) {
      var node = $(f);
      var fallback = {family: "normal", df: "5", per: "1", mass: "0.9", quantile_set: "quartiles",
                      bin_count: "8"}[f];
      node.value = saved[f] !== undefined ? saved[f] : (fallback || "");
    });
    var m = saved.method || "range";
    document.querySelectorAll('input[name="method"]').forEach(function (r) { r.checked = r.value === m; });
    chips = Array.isArray(saved.chips) ? saved.chips.slice() : [];
    edges = [];
    if (current.answered && current.view && current.view.marks.kind === "bins") {
      edges = current.view.marks.edges.slice();
      drawBoard();
    } else {
      $("board").textContent = "";
    }
  }

  function collect() {
    if (isBlock()) {
      var block = {column: current.column, expert: $("expert").value, rationale: $("rationale").value};
      block.rows = current.rows.map(function (row, i) {
        return {low: $("row" + i + ".low").value, high: $("row" + i + ".high").value,
                mass: $("row" + i + ".mass").value};
      });
      return block;
    }
    var body = {column: current.column, method: method(), chips: chips.slice(),
                chip_total: state.chips, expert: $("expert").value};
    FIELDS.forEach(function (f) { body[f] = $(f).value; });
    return body;
  }

  function remember() {
    if (!current || current.answered) return;
    var body = collect();
    try { localStorage.setItem(storeKey(current.column), JSON.stringify(body)); } catch (e) { /* private mode */ }
  }

  function schedule() {
    clearTimeout(timer);
    timer = setTimeout(preview, 180);
  }

  function preview() {
    if (!current || current.answered) return;
    remember();
    var mine = ++seq;
    api("/api/preview", collect()).then(function (r) {
      if (mine !== seq) return;
      if (method() === "bins") board(r.edges || []);
      showErrors(r.errors);
      if (r.ok) (isBlock() ? renderBlock : renderView)(r.view, r.notes);
      else renderEmpty();
      status("");
    }).catch(fail);
  }

  function showErrors(errors) {
    document.querySelectorAll(".err").forEach(function (n) { n.textContent = ""; });
    document.querySelectorAll('[aria-invalid="true"]').forEach(function (n) { n.removeAttribute("aria-invalid"); });
    Object.keys(errors || {}).forEach(function (key) {
      var where = $("err-" + key) || $("err-general");
      where.textContent = errors[key];
      var input = $(key);
      if (input && input.tagName !== "DIV") {
        input.setAttribute("aria-invalid", "true");
        input.setAttribute("aria-describedby", "err-" + key);
      }
    });
  }

  // ------------------------------------------------------------------ chips and bins
  function board(newEdges) {
    var changed = newEdges.length !== edges.length || newEdges.some(function (e, i) { return e !== edges[i]; });
    edges = newEdges;
    if (edges.length - 1 !== chips.length) chips = edges.slice(1).map(function () { return 0; });
    if (changed) drawBoard();
    updateLeft();
  }

  function updateLeft() {
    var used = chips.reduce(function (a, b) { return a + b; }, 0);
    var left = state.chips - used;
    $("chips-left").textContent = edges.length ? ("Chips left to place: " + left + " of " + state.chips)
      : "Give the lowest and highest edge to see the bins.";
    document.querySelectorAll(".bin .add").forEach(function (b) { b.disabled = left <= 0; });
  }

  function drawBoard(focus) {
    var root = $("board");
    root.textContent = "";
    chips.forEach(function (n, i) {
      var range = Number(edges[i].toPrecision(4)) + " to " + Number(edges[i + 1].toPrecision(4));
      var bin = document.createElement("div");
      bin.className = "bin";
      var count = document.createElement("span");
      count.className = "count";
      count.textContent = n;
      var stack = document.createElement("div");
      stack.className = "stack";
      for (var k = 0; k < n; k++) {
        var chip = document.createElement("span");
        chip.className = "chip";
        stack.appendChild(chip);
      }
      var add = button("+", "Add a chip to the bin " + range, "add", function () { chips[i] += 1; after(i, "add"); });
      var take = button("\u2212", "Take a chip from the bin " + range, "take", function () {
        if (chips[i] > 0) { chips[i] -= 1; after(i, "take"); }
      });
      take.disabled = n === 0;
      var edge = document.createElement("span");
      edge.className = "edge";
      edge.textContent = range;
      [count, stack, add, take, edge].forEach(function (c) { bin.appendChild(c); });
      root.appendChild(bin);
    });
    updateLeft();
    if (focus) {
      var target = root.querySelectorAll(".bin")[focus.i].querySelector("." + focus.kind);
      if (target && !target.disabled) target.focus();
      else root.querySelectorAll(".bin")[focus.i].querySelector("button:not(:disabled)").focus();
    }
  }

  function button(text, label, cls, action) {
    var b = document.createElement("button");
    b.type = "button";
    b.textContent = text;
    b.className = cls;
    b.setAttribute("aria-label", label);
    b.addEventListener("click", action);
    return b;
  }

  function after(i, kind) { drawBoard({i: i, kind: kind}); schedule(); }

  // ------------------------------------------------------------------ what the server computed
  function chartSpec(view) {
    var marks = [], bars = null, mk = view.marks;
    if (mk.kind === "range" && mk.low !== null) {
      marks = [{x: mk.low, name: "lowest"}, {x: mk.high, name: "highest"}];
    } else if (mk.kind === "quantiles") {
      marks = mk.points.map(function (p) { return {x: p[1], name: Number((100 * p[0]).toPrecision(3)) + "%"}; });
    } else if (mk.kind === "bins") {
      bars = {edges: mk.edges, heights: mk.density};
    }
    return {x: view.curve.x, curves: [{y: view.curve.density, cls: "fit", name: "fitted prior"}],
            bars: bars, marks: marks, xlabel: view.xlabel};
  }

  // The chart is drawn at the width it is shown (type stays readable in a narrow column) and
  // drawn again when the window changes width.
  var lastSpec = null;
  function drawChart(spec) {
    lastSpec = spec;
    spec.width = Math.max(320, Math.round($("chart").parentNode.getBoundingClientRect().width));
    spec.height = spec.width < 560 ? 280 : 300;
    Draw.chart($("chart"), spec);
  }
  window.addEventListener("resize", function () { if (lastSpec) drawChart(lastSpec); });

  function renderEmpty() {
    if (isBlock()) { $("words").textContent = ""; return; }
    drawChart({x: [], empty: "Complete the statement to see the prior it gives."});
    $("words").textContent = "";
  }

  function renderView(view, notes) {
    drawChart(chartSpec(view));
    $("chart-caption").textContent = "The prior fitted to the statement (" + view.family + "), in the units of the statement: " + view.xlabel + ".";
    var w = $("words"), words = view.words;
    w.textContent = "";
    heading(w, "What it says");
    words.belief.forEach(function (t) { para(w, t); });
    if (words.fit) para(w, words.fit);
    (notes || []).forEach(function (t) { para(w, t, "note"); });
    if (words.restated.length) {
      heading(w, "The same belief for other changes");
      words.restated.forEach(function (t) { para(w, t); });
    }
    if (words.implied.length) {
      heading(w, "What it implies for " + state.response + " (prior predictive)");
      words.implied.forEach(function (t) { para(w, t); });
    }
    heading(w, "As elicit show puts it");
    var pre = document.createElement("pre");
    pre.textContent = words.show.join("\n");
    w.appendChild(pre);
  }

  function showOthers() {
    if (!$("others-switch").checked) { renderView(current.view, []); $("others-words").textContent = ""; return; }
    api("/api/others", {column: current.column}).then(function (o) {
      var curves = [{y: o.mine, cls: "fit", name: "this file's expert"}];
      o.experts.forEach(function (e) { curves.push({y: e.density, cls: "other", name: e.expert}); });
      if (o.pool) curves.push({y: o.pool.density, cls: "pool", name: "linear pool"});
      drawChart({x: o.x, curves: curves, marks: [], xlabel: current.view.xlabel});
      $("others-words").textContent = o.words;
    }).catch(fail);
  }

  function accept(event) {
    event.preventDefault();
    if (!current || current.answered) return;
    clearTimeout(timer);
    api("/api/accept", collect()).then(function (r) {
      if (!r.ok) { showErrors(r.errors); status("Not saved: see the message beside the field."); return; }
      try { localStorage.removeItem(storeKey(current.column)); } catch (e) { /* nothing kept */ }
      status("");  // the question's own note says it is saved
      return load(current.column);
    }).catch(fail);
  }

  // ------------------------------------------------------------------ summary
  function showScreen(name) {
    $("question").hidden = name !== "question";
    $("summary").hidden = name !== "summary";
  }

  function summary() {
    api("/api/state").then(function (s) { state = s; current = null; renderNav(); }).catch(fail);
    api("/api/summary").then(function (s) {
      showScreen("summary");
      $("summary-path").textContent = s.out;
      var cards = $("summary-cards");
      cards.textContent = "";
      if (!s.priors.length) para(cards, "No prior saved yet.");
      s.priors.forEach(function (view) {
        var card = document.createElement("article");
        card.className = "card";
        heading(card, view.column === "noise" ? "noise sd" : view.column);
        var svg = document.createElementNS("http://www.w3.org/2000/svg", "svg");
        svg.setAttribute("role", "img");
        svg.setAttribute("aria-label", "prior of " + view.column);
        card.appendChild(svg);
        var spec = chartSpec(view);
        spec.width = 420; spec.height = 220;
        Draw.chart(svg, spec);
        view.words.belief.forEach(function (t) { para(card, t); });
        cards.appendChild(card);
      });
      $("summary-show").textContent = s.show;
      $("s-title").focus();
    }).catch(fail);
  }

  // ------------------------------------------------------------------ wiring
  document.addEventListener("DOMContentLoaded", function () {
    $("s-title").setAttribute("tabindex", "-1");
    $("statement").addEventListener("input", function () { showMethod(); schedule(); });
    $("statement").addEventListener("change", function () { showMethod(); schedule(); });
    $("statement").addEventListener("submit", accept);
    $("expert").addEventListener("change", schedule);
    $("others-switch").addEventListener("change", showOthers);
    $("to-summary").addEventListener("click", summary);
    $("to-questions").addEventListener("click", function () { showScreen("question"); load(current && current.column); });
    load();
  });
})();
