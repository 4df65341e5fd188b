"use strict";
// The orbitwatch page: plain JavaScript over the worker's JSON API, charts
// drawn as inline SVG. No external resources. The state a user picks (the
// account, the as-of point) lives in the URL fragment, so that a link
// opens the same view: #node=ID, &at=TIME (event time, UTC) or &seq=N (a
// cut).
(function () {
  const NS = "http://www.w3.org/2000/svg";
  const $ = (id) => document.getElementById(id);
  const enc = encodeURIComponent;
  let catalog = null;        // {kind, orbits: [{id, name, short, graphlet, nodes, ties, negative_ties}]}
  let view = {node: "", at: "", seq: ""}; // what the fragment asks for
  let chosen = new Set();    // orbit ids in the history chart
  let lastVector = null;     // the account's vector last read
  const rulesSeen = new Set();

  function el(tag, attrs, text) {
    const e = tag.startsWith("svg:") ? document.createElementNS(NS, tag.slice(4)) : document.createElement(tag);
    for (const k in attrs || {}) if (attrs[k] !== undefined && attrs[k] !== null) e.setAttribute(k, attrs[k]);
    if (text !== undefined) e.textContent = text;
    return e;
  }

  // Requests. A server that admits only holders of a token answers 401;
  // the page then asks for one and keeps it for this tab only.
  const tokenKey = "orbitwatch-token";
  class HTTPError extends Error {
    constructor(status, msg) { super(msg); this.status = status; }
  }
  async function call(method, path, body) {
    const headers = {Accept: "application/json"};
    const token = sessionStorage.getItem(tokenKey);
    if (token) headers.Authorization = "Bearer " + token;
    if (body !== undefined) headers["Content-Type"] = "application/json";
    const r = await fetch(path, {method: method, headers: headers, body: body === undefined ? undefined : JSON.stringify(body)});
    const out = await r.json().catch(() => ({error: r.statusText}));
    if (r.status === 401) askToken("This server admits token holders only; the token is kept in this tab.");
    if (!r.ok) throw new HTTPError(r.status, out.error || r.statusText);
    return out;
  }
  const getJSON = (path) => call("GET", path);
  // ticket(panel) starts a read for a panel and returns stale(): true once
  // a later read of the same panel started, whose answer is the one to
  // show however the two answers arrive.
  const tickets = {};
  function ticket(panel) {
    const mine = (tickets[panel] = (tickets[panel] || 0) + 1);
    return () => tickets[panel] !== mine;
  }
  function askToken(why) {
    $("token-why").textContent = why;
    $("token-form").hidden = false;
  }
  $("token-form").addEventListener("submit", (e) => {
    e.preventDefault();
    sessionStorage.setItem(tokenKey, $("token").value.trim());
    location.reload();
  });

  // Numbers and times in plain words.
  function fmtCount(n) {
    const a = Math.abs(n);
    const short = (v, unit) => (v < 10 ? (Math.round(v * 10) / 10).toString() : Math.round(v).toString()) + unit;
    if (a < 1000) return String(Math.round(n * 100) / 100);
    if (a < 1e6) return short(n / 1e3, "k");
    if (a < 1e9) return short(n / 1e6, "M");
    return short(n / 1e9, "G");
  }
  const pad = (n) => String(n).padStart(2, "0");
  const months = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"];
  function fmtTime(t) {
    if (!t) return "—";
    const d = new Date(t);
    if (isNaN(d)) return String(t);
    return `${d.getUTCFullYear()}-${pad(d.getUTCMonth() + 1)}-${pad(d.getUTCDate())} ${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}` + (d.getUTCSeconds() ? ":" + pad(d.getUTCSeconds()) : "") + " UTC";
  }
  const orbitOf = (o) => catalog && catalog.orbits[o];
  const orbitName = (o) => { const c = orbitOf(o); return c ? (c.short || c.name) : "orbit " + o; };
  const log10p = (c) => Math.log10(c + 1);
  const clip = (s, n) => s.length > n ? s.slice(0, n - 1) + "…" : s;

  // The fragment: #node=ID&at=TIME or &seq=N.
  function readHash() {
    const p = new URLSearchParams(location.hash.slice(1));
    return {node: p.get("node") || "", at: p.get("at") || "", seq: p.get("seq") || ""};
  }
  function hashOf(v) {
    const p = new URLSearchParams();
    if (v.node) p.set("node", v.node);
    if (v.at) p.set("at", v.at);
    else if (v.seq) p.set("seq", v.seq);
    return "#" + p.toString();
  }
  function go(v) {
    const h = hashOf(v);
    if (h === location.hash || (h === "#" && location.hash === "")) render(); else location.hash = h;
  }
  const nodeLink = (id, extra) => hashOf(Object.assign({node: id, at: view.at, seq: view.at ? "" : view.seq}, extra || {}));
  // The as-of query of the view: "" (now), at=…, or seq=….
  function asOfQuery() {
    if (view.at) return "at=" + enc(view.at);
    if (view.seq) return "seq=" + enc(view.seq);
    return "";
  }
  const withQuery = (path, q) => q ? path + (path.includes("?") ? "&" : "?") + q : path;

  // Signature: one bar per orbit, length log10(count+1), grouped by
  // graphlet size, or for signed kinds by the sign pattern (how many of
  // the graphlet's ties are negative). Large catalogs show the non-zero
  // orbits only.
  function groupOf(o) {
    const c = orbitOf(o);
    if (!c) return {key: 0, label: ""};
    if (catalog.kind === "signed") {
      const n = c.negative_ties;
      if (n === 0) return {key: 0, label: "no negative tie"};
      if (n === c.ties) return {key: 99, label: "every tie negative"};
      return {key: n, label: n === 1 ? "1 negative tie" : n + " negative ties"};
    }
    return {key: c.nodes, label: c.nodes + " accounts"};
  }
  function logTicks(maxLog) {
    const ticks = [0];
    for (let d = 0; d <= maxLog; d++) ticks.push(Math.pow(10, d));
    return ticks;
  }
  let showAll = false; // large catalogs: every non-zero orbit, not the largest few
  const manyOrbits = 40, fewShown = 30;
  // shownOrbits returns the orbits a large catalog's charts list: the
  // fewShown largest non-zero ones (and those in keep), or every non-zero
  // one when showAll; a small catalog's all.
  function shownOrbits(orbits, keep) {
    const ids = orbits.map((_, o) => o);
    if (orbits.length <= manyOrbits) return ids;
    const nz = ids.filter((o) => orbits[o] > 0 || (keep && keep.has(o)));
    if (showAll) return nz;
    const top = new Set(nz.slice().sort((a, b) => orbits[b] - orbits[a] || a - b).slice(0, fewShown));
    return nz.filter((o) => top.has(o) || (keep && keep.has(o)));
  }
  function showAllButton(orbits, shown) {
    const nz = orbits.filter((c) => c > 0).length;
    const p = el("p", {class: "small muted"}, `${shown} of ${orbits.length} orbits drawn (${nz} are not 0). `);
    if (nz > fewShown) {
      const b = el("button", {type: "button", class: "quiet show-all"}, showAll ? `Show the ${fewShown} largest` : `Show all ${nz}`);
      b.addEventListener("click", () => { showAll = !showAll; if (lastVector) drawVector(lastVector); });
      p.append(b);
    }
    return p;
  }
  function signatureChart(orbits) {
    const many = orbits.length > manyOrbits;
    let ids = shownOrbits(orbits);
    ids.sort((a, b) => groupOf(a).key - groupOf(b).key || a - b);
    const rowH = 17, left = 212, width = 440, right = 40, top = 4;
    const rows = [];
    let last = null;
    for (const o of ids) {
      const g = groupOf(o);
      if (g.label && g.key !== last) { rows.push({head: g.label}); last = g.key; }
      rows.push({o: o});
    }
    const h = top + rows.length * rowH + 24;
    const maxLog = Math.max(1, Math.ceil(Math.max(0, ...orbits.map(log10p))));
    const svg = el("svg:svg", {viewBox: `0 0 ${width} ${h}`, role: "img", "aria-label": "orbit counts on a log scale"});
    const X = (c) => left + log10p(c) / maxLog * (width - left - right);
    for (const t of logTicks(maxLog)) {
      if (log10p(t) > maxLog + 1e-9) continue;
      svg.append(el("svg:line", {class: "axis", x1: X(t), x2: X(t), y1: top, y2: h - 20}));
      svg.append(el("svg:text", {x: X(t), y: h - 6, "font-size": 10, "text-anchor": "middle"}, fmtCount(t)));
    }
    rows.forEach((r, i) => {
      const y = top + i * rowH;
      if (r.head !== undefined) {
        svg.append(el("svg:text", {class: "group", x: 2, y: y + 12, "font-size": 10.5, "font-weight": 600}, r.head));
        return;
      }
      const o = r.o, c = orbits[o];
      const g = el("svg:g", {class: "orbit-bar", "data-orbit": o});
      const full = `${o} ${orbitName(o)}`;
      const label = el("svg:text", {x: left - 6, y: y + 12, "font-size": 10.5, "text-anchor": "end"}, clip(full, 34));
      label.append(el("svg:title", {}, full));
      g.append(label);
      const w = Math.max(c > 0 ? 1.5 : 0, X(c) - left);
      const bar = el("svg:rect", {class: "bar", x: left, y: y + 3, width: w.toFixed(1), height: rowH - 5});
      bar.append(el("svg:title", {}, `${orbitName(o)}: ${c}`));
      g.append(bar);
      g.append(el("svg:text", {x: left + w + 4, y: y + 12, "font-size": 10}, fmtCount(c)));
      svg.append(g);
    });
    const out = [svg];
    if (many) out.push(showAllButton(orbits, ids.length));
    return out;
  }

  // Time axis: ticks at a round step (minutes to months) that gives at
  // most max ticks; labels show the date where it changes.
  const minute = 60e3, hour = 60 * minute, day = 24 * hour;
  const steps = [minute, 2 * minute, 5 * minute, 10 * minute, 15 * minute, 30 * minute, hour, 2 * hour, 3 * hour, 6 * hour, 12 * hour, day, 2 * day, 7 * day, 14 * day, 30 * day, 91 * day, 365 * day];
  function timeTicks(t0, t1, max) {
    const span = Math.max(t1 - t0, minute);
    const step = steps.find((s) => span / s <= max) || steps[steps.length - 1];
    const out = [];
    for (let t = Math.ceil(t0 / step) * step; t <= t1; t += step) out.push(t);
    let lastDay = "";
    return out.map((t) => {
      const d = new Date(t);
      const date = `${months[d.getUTCMonth()]} ${d.getUTCDate()}`;
      const clock = `${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}`;
      let label = step >= day ? date : (date !== lastDay ? `${date} ${clock}` : clock);
      lastDay = date;
      return {t: t, label: label};
    });
  }

  // Lines over event time: step lines (a count holds until the next cut),
  // each series in its own colour and dash pattern, drawn widest first so
  // that equal series stay visible, with a legend below.
  const palette = ["#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000"]; // Okabe & Ito
  const dashes = ["", "7 4", "2 3", "10 3 2 3", "4 2", "1 2", "12 5"];
  function stepChart(opts) {
    const {xs, series, width, height, logY, mark, yLabel} = opts;
    const left = 52, right = 14, top = yLabel ? 22 : 10, bottom = 34;
    const svg = el("svg:svg", {viewBox: `0 0 ${width} ${height}`, role: "img", "aria-label": opts.label});
    const t0 = Math.min(...xs), t1 = Math.max(...xs, mark || -Infinity, t0 + minute);
    const ys = series.flatMap((s) => s.y);
    const f = logY ? log10p : (v) => v;
    let ymax = Math.max(...ys.map(f), logY ? 1 : 1e-9);
    ymax = logY ? Math.ceil(ymax) : niceMax(ymax);
    const X = (t) => left + (t - t0) / (t1 - t0) * (width - left - right);
    const Y = (v) => top + (1 - f(v) / ymax) * (height - top - bottom);
    const yticks = logY ? logTicks(ymax).filter((v) => log10p(v) <= ymax + 1e-9) : [0, ymax / 4, ymax / 2, 3 * ymax / 4, ymax];
    for (const v of yticks) {
      svg.append(el("svg:line", {class: "axis", x1: left, x2: width - right, y1: Y(v), y2: Y(v)}));
      svg.append(el("svg:text", {x: left - 5, y: Y(v) + 4, "font-size": 10, "text-anchor": "end"}, logY ? fmtCount(v) : fmtCount(Math.round(v * 1000) / 1000)));
    }
    if (yLabel) svg.append(el("svg:text", {x: 4, y: 11, "font-size": 10, class: "muted-text"}, yLabel));
    for (const tk of timeTicks(t0, t1, Math.floor((width - left - right) / 95))) {
      svg.append(el("svg:line", {class: "axis", x1: X(tk.t), x2: X(tk.t), y1: top, y2: height - bottom + 4}));
      svg.append(el("svg:text", {class: "tick", x: X(tk.t), y: height - bottom + 16, "font-size": 10, "text-anchor": "middle"}, tk.label));
    }
    svg.append(el("svg:text", {x: width - right, y: height - 4, "font-size": 10, "text-anchor": "end"}, "event time (UTC)"));
    if (mark) {
      svg.append(el("svg:line", {class: "asof", x1: X(mark), x2: X(mark), y1: top, y2: height - bottom}));
      svg.append(el("svg:text", {x: X(mark) + 3, y: top + 10, "font-size": 10}, "as of"));
    }
    const order = series.map((_, i) => i);
    order.forEach((i) => {
      const s = series[i];
      let d = "";
      s.y.forEach((v, k) => {
        const x = X(xs[k]).toFixed(1), y = Y(v).toFixed(1);
        d += k === 0 ? `M${x} ${y}` : ` H${x} V${y}`;
      });
      d += ` H${(width - right).toFixed(1)}`;
      const w = 2 + 1.6 * (series.length - 1 - i);
      svg.append(el("svg:path", {class: "series", "data-orbit": s.id, d: d, fill: "none", stroke: palette[i % palette.length], "stroke-width": w.toFixed(1), "stroke-dasharray": dashes[i % dashes.length], "stroke-opacity": 0.85}));
    });
    const legend = el("ul", {class: "series-legend small"});
    series.forEach((s, i) => {
      const sw = el("svg:svg", {width: 30, height: 10, "aria-hidden": "true"});
      sw.append(el("svg:line", {x1: 0, x2: 30, y1: 5, y2: 5, stroke: palette[i % palette.length], "stroke-width": 3, "stroke-dasharray": dashes[i % dashes.length]}));
      const li = el("li");
      li.append(sw, document.createTextNode(" " + s.name + (s.last !== undefined ? ` (now ${fmtCount(s.last)})` : "")));
      legend.append(li);
    });
    return [svg, legend];
  }
  function niceMax(v) {
    const p = Math.pow(10, Math.floor(Math.log10(v)));
    for (const m of [1, 2, 2.5, 5, 10]) if (m * p >= v) return m * p;
    return 10 * p;
  }

  // Neighbourhood: the account in the middle, its counterparties on an
  // inner ring (busiest first, from the top, clockwise), theirs on an outer
  // ring beside the one that reaches them. Arrows show who paid whom in
  // directed kinds; negative ties are dashed and in their own colour.
  function neighbourChart(nb) {
    const size = 460, c = size / 2, r1 = 120, r2 = 200;
    const nodes = nb.nodes, first = nodes.filter((n) => n.hop === 1).length;
    const svg = el("svg:svg", {viewBox: `0 0 ${size} ${size}`, role: "img", "aria-label": `${nb.node}, ${first} counterparties drawn and ${nodes.length - 1 - first} of theirs`});
    const defs = el("svg:defs");
    for (const [id, cls] of [["arrow", "arrow"], ["arrow-neg", "arrow neg"]]) {
      const m = el("svg:marker", {id: id, viewBox: "0 0 10 10", refX: 9, refY: 5, markerWidth: 7, markerHeight: 7, markerUnits: "userSpaceOnUse", orient: "auto-start-reverse"});
      m.append(el("svg:path", {d: "M0 0 L10 5 L0 10 z", class: cls}));
      defs.append(m);
    }
    svg.append(defs);
    const pos = new Array(nodes.length), angle = new Array(nodes.length);
    pos[0] = [c, c];
    const parent = nodes.map((n) => n.hop === 2 ? n.via : -1);
    const sector = 2 * Math.PI / Math.max(first, 1);
    for (let i = 1; i <= first; i++) {
      angle[i] = sector * (i - 1) - Math.PI / 2;
      pos[i] = [c + r1 * Math.cos(angle[i]), c + r1 * Math.sin(angle[i])];
    }
    const kids = {};
    nodes.forEach((n, i) => { if (n.hop === 2) (kids[parent[i]] = kids[parent[i]] || []).push(i); });
    for (const p in kids) {
      const ks = kids[p], spread = Math.min(sector * 0.8, 0.5);
      ks.forEach((k, j) => {
        angle[k] = angle[p] + (ks.length === 1 ? 0 : spread * (j / (ks.length - 1) - 0.5));
        pos[k] = [c + r2 * Math.cos(angle[k]), c + r2 * Math.sin(angle[k])];
      });
    }
    const radius = (i) => nodes[i].hop === 0 ? 10 : nodes[i].hop === 1 ? 7 : 4.5;
    const directed = nb.kind === "directed";
    for (const t of nb.ties) {
      let [a, b] = [t.a, t.b];
      if (t.dir === "in") [a, b] = [b, a];
      const [x1, y1] = pos[a], [x2, y2] = pos[b];
      const len = Math.hypot(x2 - x1, y2 - y1) || 1;
      const ux = (x2 - x1) / len, uy = (y2 - y1) / len;
      const neg = t.sign === "-";
      // A second-hop account is drawn beside the counterparty that
      // reaches it; its other ties into the inner ring are drawn faintly,
      // without arrows, so that the picture stays readable.
      const farTie = nodes[t.a].hop === 2 || nodes[t.b].hop === 2;
      const extra = farTie && nodes[t.b].via !== t.a && nodes[t.a].via !== t.b;
      const line = el("svg:line", {
        class: "edge" + (neg ? " neg" : "") + (nodes[t.a].hop + nodes[t.b].hop <= 1 ? " own" : "") + (farTie ? " far" : "") + (extra ? " extra" : ""),
        x1: (x1 + ux * radius(a)).toFixed(1), y1: (y1 + uy * radius(a)).toFixed(1),
        x2: (x2 - ux * radius(b)).toFixed(1), y2: (y2 - uy * radius(b)).toFixed(1),
        "data-a": nodes[a].id, "data-b": nodes[b].id,
      });
      if (directed && !extra) {
        line.setAttribute("marker-end", "url(#arrow)");
        if (t.dir === "both") line.setAttribute("marker-start", "url(#arrow)");
      }
      if (neg) line.setAttribute("data-sign", "-");
      svg.append(line);
    }
    nodes.forEach((n, i) => {
      if (i === 0) return;
      const a = el("svg:a", {href: nodeLink(n.id), class: "nbr-link", "data-hop": n.hop});
      const dot = el("svg:circle", {class: n.hop === 1 ? "nbr" : "far", cx: pos[i][0].toFixed(1), cy: pos[i][1].toFixed(1), r: radius(i)});
      dot.append(el("svg:title", {}, `${n.id}: ${n.degree} counterparties` + (n.hidden ? `, ${n.hidden} not drawn` : "")));
      a.append(dot);
      if (n.hop === 1 && first <= 24) {
        const out = [Math.cos(angle[i]), Math.sin(angle[i])];
        const lx = pos[i][0] + out[0] * 14, ly = pos[i][1] + out[1] * 14 + 4;
        const anchor = Math.abs(out[0]) < 0.3 ? "middle" : out[0] > 0 ? "start" : "end";
        a.append(el("svg:text", {class: "label", x: lx.toFixed(1), y: ly.toFixed(1), "font-size": 10, "text-anchor": anchor}, clip(n.id, 16) + (n.hidden ? ` +${n.hidden}` : "")));
      }
      svg.append(a);
    });
    svg.append(el("svg:circle", {class: "centre", cx: c, cy: c, r: radius(0)}));
    svg.append(el("svg:text", {x: c, y: c + 24, "font-size": 11, "text-anchor": "middle", "font-weight": 600}, clip(nb.node, 22)));
    return svg;
  }
  function neighbourLegend(kind) {
    const items = [];
    const sw = (cls) => {
      const s = el("svg:svg", {width: 34, height: 10, "aria-hidden": "true"});
      s.append(el("svg:line", {x1: 2, x2: 30, y1: 5, y2: 5, class: cls}));
      return s;
    };
    if (kind === "signed") {
      items.push([sw("edge own"), "positive tie: payments"]);
      items.push([sw("edge own neg"), "negative tie: a dispute, chargeback or fraud report"]);
    } else if (kind === "directed") {
      items.push([null, "→ who paid whom (payer → payee); arrows both ways: both paid"]);
    } else {
      items.push([sw("edge own"), "the two accounts paid each other (either way) in the window"]);
    }
    items.push([null, "inner ring: counterparties; outer ring: theirs; +N: counterparties not drawn"]);
    return items.map(([s, text]) => {
      const span = el("span", {class: "legend-item"});
      if (s) span.append(s);
      span.append(document.createTextNode(" " + text));
      return span;
    });
  }

  // Alerts, each with a link to the account as of the alert's cut and a
  // review form.
  const verdictWords = {"confirmed": "Confirmed", "dismissed": "Dismissed", "needs-more": "Needs more"};
  function alertItem(a, withNode) {
    const li = el("li", {class: "alert", "data-rule": a.rule, "data-id": a.id});
    const head = el("div");
    head.append(el("span", {class: "rule"}, a.rule));
    head.append(document.createTextNode(` · score ${fmtCount(a.score)} (fires at ${fmtCount(a.fire)}) · ${fmtTime(a.event_time)}`));
    li.append(head);
    const link = el("a", {class: "node-link", href: hashOf({node: a.node, seq: String(a.seq)})}, withNode ? a.node : "this account as of the alert");
    link.title = `${a.node} as of cut ${a.seq}, where the alert was raised`;
    li.append(link);
    if (withNode) li.append(el("span", {class: "small muted"}, " as of the alert"));
    const moves = (a.orbits || []).slice(0, 3).map((m) => `${m.name}: ${fmtCount(m.before)} → ${fmtCount(m.after)}`).join("; ");
    if (moves) li.append(el("div", {class: "moves"}, moves));
    li.append(triageBlock(a));
    return li;
  }
  function triageBlock(a) {
    const box = el("div", {class: "triage"});
    if (a.triage) {
      const t = a.triage;
      const badge = el("span", {class: "verdict v-" + t.verdict}, verdictWords[t.verdict] || t.verdict);
      box.append(badge, document.createTextNode(` by ${t.by}, ${fmtTime(t.at)}`));
      if (t.note) box.append(el("div", {class: "note"}, "“" + t.note + "”"));
    }
    const btn = el("button", {type: "button", class: "quiet review", "aria-expanded": "false"}, a.triage ? "Change review" : "Review");
    const form = el("form", {class: "triage-form", hidden: ""});
    const fs = el("fieldset");
    fs.append(el("legend", {}, "Verdict"));
    const name = "verdict-" + a.id + "-" + Math.random().toString(36).slice(2, 7);
    for (const v of ["confirmed", "dismissed", "needs-more"]) {
      const id = name + "-" + v;
      const r = el("input", {type: "radio", name: name, id: id, value: v, required: ""});
      if (a.triage && a.triage.verdict === v) r.checked = true;
      const lab = el("label", {for: id});
      lab.append(r, document.createTextNode(" " + verdictWords[v]));
      fs.append(lab);
    }
    const noteID = name + "-note";
    const note = el("textarea", {id: noteID, rows: 2, maxlength: 4000});
    const save = el("button", {type: "submit"}, "Save verdict");
    const msg = el("span", {class: "msg small", role: "status"});
    form.append(fs, el("label", {for: noteID, class: "small"}, "Note (what you checked, a case number)"), note, save, msg);
    btn.addEventListener("click", () => {
      form.hidden = !form.hidden;
      btn.setAttribute("aria-expanded", String(!form.hidden));
      if (!form.hidden) form.querySelector("input").focus();
    });
    form.addEventListener("submit", async (e) => {
      e.preventDefault();
      const v = form.querySelector("input:checked");
      if (!v) { msg.textContent = "Choose a verdict."; return; }
      save.disabled = true;
      msg.textContent = "saving…";
      try {
        await call("POST", "/v1/alerts/" + enc(a.id) + "/triage", {verdict: v.value, note: note.value});
        msg.textContent = "saved";
        form.hidden = true;
        refreshAlerts();
      } catch (err) {
        if (err.status === 401 || err.status === 403) {
          msg.textContent = "Saving a verdict needs an admin token: " + err.message;
          askToken("A verdict needs an admin token; the token is kept in this tab.");
        } else {
          msg.textContent = err.message;
        }
      } finally {
        save.disabled = false;
      }
    });
    box.append(btn, form);
    return box;
  }
  // A list with a review form open or being typed in is not redrawn by
  // the periodic refresh.
  const busy = (list) => list.querySelector(".triage-form:not([hidden])") !== null;

  function alertFilterQuery() {
    const q = [];
    const rule = $("rule-filter").value, verdict = $("verdict-filter").value, node = $("node-filter").value.trim();
    if (rule) q.push("rule=" + enc(rule));
    if (verdict) q.push("verdict=" + enc(verdict));
    if (node) q.push("node=" + enc(node));
    if ($("since-filter").value) q.push("since=" + enc($("since-filter").value + "T00:00:00Z"));
    let until = $("until-filter").value ? $("until-filter").value + "T23:59:59Z" : "";
    if (view.at && (!until || view.at < until)) until = view.at;
    if (until) q.push("until=" + enc(until));
    return q.join("&");
  }
  async function loadRecent(force) {
    const stale = ticket("recent");
    const list = $("recent");
    if (!force && busy(list)) return;
    try {
      const r = await getJSON(withQuery("/v1/alerts?limit=30", alertFilterQuery()));
      if (stale()) return;
      for (const a of r.alerts) {
        if (!rulesSeen.has(a.rule)) { rulesSeen.add(a.rule); $("rule-filter").append(el("option", {value: a.rule}, a.rule)); }
      }
      if (!force && busy(list)) return;
      list.replaceChildren(...r.alerts.map((a) => alertItem(a, true)));
      const filtered = alertFilterQuery() !== "";
      const missing = (r.errors || []).length ? ` Not listed, a worker did not answer: ${r.errors.join("; ")}.` : "";
      $("recent-note").textContent = (view.at ? `Alerts raised up to ${fmtTime(view.at)}.` : "") + missing;
      if (r.alerts.length === 0) {
        list.append(el("li", {class: "none muted"}, filtered ? "No alerts match these filters. Clear a filter or pick a later time." : "No alerts yet. Alerts are raised at each cut when an account's signature changes in a way a rule looks for."));
      }
    } catch (e) {
      if (stale()) return;
      list.replaceChildren(el("li", {class: "err"}, e.message));
    }
  }

  // The account view.
  function showEmpty(title, html) {
    $("node-title").textContent = title;
    $("node-meta").textContent = "";
    $("node-grid").hidden = true;
    const box = $("empty");
    box.replaceChildren(...html);
    box.hidden = false;
  }
  async function loadNode() {
    const stale = ticket("node");
    const id = view.node;
    $("node-id").value = id;
    if (!id) {
      showEmpty("No account chosen", [
        el("p", {}, "Enter an account id in the box at the top and press Enter, or choose an alert on the right."),
        el("p", {class: "muted"}, "You will see the account's signature (how often it takes each position in small patterns of payments), its counterparties two steps out, how its counts changed over time, and its alerts. Pick a time under “As of” to see all of it as it was then."),
      ]);
      return;
    }
    $("node-title").textContent = id;
    $("node-meta").textContent = "loading…";
    let v;
    try {
      v = await getJSON(withQuery("/v1/nodes/" + enc(id), asOfQuery()));
    } catch (e) {
      if (stale()) return;
      if (e.status === 404 && /no complete cut/.test(e.message)) {
        showEmpty(id, [
          el("p", {}, `Nothing was saved yet at ${view.at ? fmtTime(view.at) : "that point"}: the first cut comes later.`),
          el("p", {class: "muted"}, "Pick a later time under “As of”, or press Latest."),
        ]);
      } else if (e.status === 404) {
        const when = view.at ? ` as of ${fmtTime(view.at)}` : view.seq ? ` at cut ${view.seq}` : "";
        showEmpty(id, [
          el("p", {}, `No account “${id}” in this data${when}.`),
          el("p", {class: "muted"}, (when ? "It may have made its first payment later: pick a later time under “As of”, or press Latest. " : "") + "Ids are matched exactly, capitals and spaces included."),
          el("p", {class: "small muted"}, "The server said: " + e.message),
        ]);
      } else if (e.status === 410) {
        showEmpty(id, [el("p", {}, "That time is older than the history this server keeps."), el("p", {class: "muted"}, "Pick a later time under “As of”. " + e.message)]);
      } else {
        showEmpty(id, [el("p", {class: "err"}, e.message)]);
      }
      return;
    }
    if (stale()) return;
    $("empty").hidden = true;
    $("node-grid").hidden = false;
    const meta = $("node-meta");
    meta.replaceChildren();
    const asof = view.at || view.seq;
    meta.append(document.createTextNode(asof ? "As of " : "Now: "));
    meta.append(el("abbr", {title: "a cut: a point in event time at which the whole state is saved"}, asof ? "cut" : "log position"));
    meta.append(document.createTextNode(` ${v.seq}, event time ${fmtTime(v.event_time)} · ${v.kind} payments, patterns of up to ${v.max_nodes} accounts`));
    if (view.seq && v.event_time) $("asof").value = toPicker(v.event_time);
    if (chosen.size === 0) {
      const top = v.orbits.map((c, o) => [c, o]).filter(([c]) => c > 0).sort((a, b) => b[0] - a[0]).slice(0, 3).map(([, o]) => o);
      chosen = new Set(top.length ? top : [0]);
    }
    lastVector = v;
    drawVector(v);
    await Promise.all([loadHistory(), loadNeighbours(id), loadSimilar(id), loadNodeAlerts(id)]);
  }
  function drawVector(v) {
    $("sig-chart").replaceChildren(...signatureChart(v.orbits));
    orbitChoices(v.orbits);
  }

  function orbitChoices(orbits) {
    const fs = $("hist-orbits");
    fs.replaceChildren(el("legend", {}, "Orbits shown"));
    for (const o of shownOrbits(orbits, chosen)) {
      const id = "orb-" + o;
      const box = el("input", {type: "checkbox", id: id, value: o});
      box.checked = chosen.has(o);
      box.addEventListener("change", () => { box.checked ? chosen.add(o) : chosen.delete(o); loadHistory(); });
      const lab = el("label", {for: id, title: orbitOf(o) ? orbitOf(o).name : ""});
      lab.append(box, document.createTextNode(" " + o + " " + clip(orbitName(o), 34)));
      fs.append(lab);
    }
  }

  async function loadHistory() {
    const stale = ticket("history");
    const id = view.node;
    if (!id) return;
    const box = $("hist-chart");
    try {
      const h = await getJSON("/v1/nodes/" + enc(id) + "/history");
      if (stale()) return;
      const vs = h.versions.filter((x) => x.event_time);
      const picked = [...chosen].sort((a, b) => a - b);
      if (vs.length === 0) {
        box.replaceChildren(el("p", {class: "muted"}, "No saved history for this account yet: history starts at the first cut after its first payment. Come back after the next cut."));
        return;
      }
      if (picked.length === 0) {
        box.replaceChildren(el("p", {class: "muted"}, "Tick one or more orbits above to draw them."));
        return;
      }
      const xs = vs.map((x) => Date.parse(x.event_time));
      const mark = lastVector && (view.at || view.seq) && lastVector.event_time ? Date.parse(lastVector.event_time) : null;
      const series = picked.map((o) => ({id: o, name: `${o} ${orbitName(o)}`, y: vs.map((x) => x.orbits[o]), last: vs[vs.length - 1].orbits[o]}));
      box.replaceChildren(...stepChart({xs: xs, series: series, width: 900, height: 250, logY: true, mark: mark, label: "orbit counts over event time", yLabel: "count (log)"}));
    } catch (e) {
      if (stale()) return;
      box.replaceChildren(el("p", {class: e.status === 404 ? "muted" : "err"}, e.status === 404 ? "No saved history for this account yet: history starts at the first cut after its first payment." : e.message));
    }
  }

  async function loadNeighbours(id) {
    const stale = ticket("neighbours");
    const box = $("nb-chart");
    try {
      const nb = await getJSON(withQuery("/v1/nodes/" + enc(id) + "/neighbors?limit=16&far=3", asOfQuery()));
      if (stale()) return;
      const first = nb.nodes.filter((n) => n.hop === 1).length, far = nb.nodes.length - 1 - first;
      $("nb-cap").textContent = `Counterparties: ${nb.degree}` + (first < nb.degree ? `, the ${first} busiest drawn` : "");
      $("nb-legend").replaceChildren(...neighbourLegend(nb.kind));
      if (nb.degree === 0) {
        box.replaceChildren(el("p", {class: "muted"}, "No counterparties at this time: every payment of this account has left the window or was reversed."));
        $("nb-note").textContent = "";
        return;
      }
      box.replaceChildren(neighbourChart(nb));
      const hidden = nb.nodes[0].hidden;
      $("nb-note").textContent = (hidden ? `${hidden} more counterparties are not drawn. ` : "") + (far ? `The outer ring shows up to 3 counterparties of each, ${far} in all. ` : "") + "Click an account to open it.";
    } catch (e) {
      if (stale()) return;
      box.replaceChildren(el("p", {class: "err"}, e.message));
    }
  }

  async function loadSimilar(id) {
    const stale = ticket("similar");
    const list = $("similar-list");
    try {
      const r = await getJSON(withQuery("/v1/nodes/" + enc(id) + "/similar?k=8", asOfQuery()));
      if (stale()) return;
      list.replaceChildren(...r.similar.map((s) => {
        const li = el("li");
        li.append(el("a", {href: nodeLink(s.node)}, s.node), document.createTextNode(` · distance ${s.distance.toFixed(3)}`));
        const differs = (s.orbits || []).slice(0, 2).map((o) => o.name).join("; ");
        if (differs) li.append(el("div", {class: "small muted"}, "differs most in: " + differs));
        return li;
      }));
      if (r.similar.length === 0) list.append(el("li", {class: "muted"}, "No other account has enough counterparties to compare."));
    } catch (e) {
      if (stale()) return;
      const quiet = e.status === 404 && /endpoint/.test(e.message) || e.status === 501;
      list.replaceChildren(el("li", {class: "muted small"}, quiet ? "Not available on this server." : e.message));
    }
  }

  async function loadNodeAlerts(id) {
    const stale = ticket("node-alerts");
    const list = $("node-alert-list");
    if (busy(list)) return;
    try {
      const until = view.at ? "&until=" + enc(view.at) : "";
      const r = await getJSON("/v1/alerts?limit=20&node=" + enc(id) + until);
      if (stale()) return;
      if (busy(list)) return;
      list.replaceChildren(...r.alerts.map((a) => alertItem(a, false)));
      if (r.alerts.length === 0) list.append(el("li", {class: "none muted"}, "No alerts for this account" + (view.at ? " up to this time." : ".")));
    } catch (e) {
      if (stale()) return;
      list.replaceChildren(el("li", {class: "err"}, e.message));
    }
  }
  function refreshAlerts() {
    loadRecent(true);
    if (view.node) loadNodeAlerts(view.node);
  }

  // Network drift, drawn when its panel is opened.
  async function loadDrift() {
    const box = $("drift-chart");
    box.replaceChildren(el("p", {class: "muted small"}, "computing…"));
    try {
      const d = await getJSON("/v1/drift");
      const t0 = Date.parse(d.from.event_time), t1 = Date.parse(d.to.event_time);
      if (!(t1 > t0)) {
        box.replaceChildren(el("p", {class: "muted small"}, "Only one saved point in time so far: drift needs two. Come back after more cuts."));
        return;
      }
      const every = Math.max(60, Math.round((t1 - t0) / 1000 / 12)) + "s";
      const s = await getJSON(`/v1/drift/series?every=${every}`);
      const pts = s.points.filter((p) => p.event_time);
      const xs = pts.map((p) => Date.parse(p.at));
      box.replaceChildren(...stepChart({xs: xs, series: [{id: "first", name: "from the first saved point", y: pts.map((p) => p.gcd11_first)}, {id: "prev", name: "from the step before", y: pts.map((p) => p.gcd11_previous)}],
        width: 340, height: 170, logY: false, label: "network drift over event time", yLabel: "GCD-11"}));
    } catch (e) {
      box.replaceChildren(el("p", {class: "muted small"}, e.status === 404 || e.status === 501 ? "Not available here: " + e.message : e.message));
    }
  }
  $("drift").addEventListener("toggle", () => { if ($("drift").open) loadDrift(); });

  // Status, with its words explained where they appear.
  async function pollStatus() {
    try {
      const s = await getJSON("/v1/status");
      const box = $("status");
      box.replaceChildren();
      for (const sh of s.shards) {
        if (sh.error) { box.append(el("span", {class: "lag-bad"}, `worker ${sh.shard}: ${sh.error}`)); continue; }
        const span = el("span", {class: "shard-status"});
        const abbr = (word, title) => el("abbr", {title: title}, word);
        span.append(document.createTextNode(`worker ${sh.shard + 1} of ${sh.shard_count} · `));
        span.append(abbr("cut", "a point in event time at which the whole state is saved"), document.createTextNode(` ${sh.cut_seq} · `));
        const lag = el("span", {class: sh.lag > 5000 ? "lag-bad" : ""});
        lag.append(abbr("lag", "payments published but not yet counted; it should fall back to 0"), document.createTextNode(" " + fmtCount(sh.lag)));
        span.append(lag, document.createTextNode(` · ${fmtCount(sh.applied)} payments counted · `));
        span.append(abbr("watermark", "the latest event time seen so far: payments up to it are counted"), document.createTextNode(" " + fmtTime(sh.watermark) + (sh.ready ? "" : " · catching up")));
        box.append(span);
      }
    } catch (e) {
      $("status").replaceChildren(el("span", {class: "lag-bad"}, "status: " + e.message));
    }
  }

  // datetime-local values are read and written as UTC.
  function toPicker(t) {
    const d = new Date(t);
    return `${d.getUTCFullYear()}-${pad(d.getUTCMonth() + 1)}-${pad(d.getUTCDate())}T${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}:${pad(d.getUTCSeconds())}`;
  }
  function fromPicker(s) {
    if (!s) return "";
    return (s.length === 16 ? s + ":00" : s) + "Z";
  }

  function render() {
    const next = readHash();
    if (next.node !== view.node) chosen = new Set();
    view = next;
    $("asof").value = view.at ? toPicker(view.at) : "";
    $("asof-now").disabled = !view.at && !view.seq;
    document.title = (view.node ? view.node + " · " : "") + "orbitwatch";
    loadNode();
    loadRecent(true);
  }

  $("find").addEventListener("submit", (e) => {
    e.preventDefault();
    const id = $("node-id").value.trim();
    if (id) go({node: id, at: view.at, seq: view.at ? "" : view.seq});
  });
  $("asof-form").addEventListener("submit", (e) => {
    e.preventDefault();
    go({node: view.node, at: fromPicker($("asof").value), seq: ""});
  });
  $("asof-now").addEventListener("click", () => go({node: view.node, at: "", seq: ""}));
  $("alert-filters").addEventListener("submit", (e) => { e.preventDefault(); loadRecent(true); });
  $("alert-filters").addEventListener("reset", () => setTimeout(() => loadRecent(true), 0));
  for (const id of ["rule-filter", "verdict-filter"]) $(id).addEventListener("change", () => loadRecent(true));
  window.addEventListener("hashchange", render);

  getJSON("/v1/catalog").then((c) => { catalog = c; }).catch(() => {}).finally(() => {
    render();
    pollStatus();
    setInterval(() => loadRecent(false), 4000);
    setInterval(pollStatus, 3000);
    setInterval(() => { if (view.node) loadNodeAlerts(view.node); }, 6000);
  });
})();
