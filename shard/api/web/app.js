"use strict";
// The orbitwatch page: plain JavaScript over the worker's JSON API, charts
// drawn as inline SVG. No external resources.
(function () {
  const NS = "http://www.w3.org/2000/svg";
  const $ = (id) => document.getElementById(id);
  let catalog = null;      // {orbits: [{id, name, graphlet}]}
  let current = null;      // node id shown
  let chosen = new Set();  // orbit ids in the history chart
  const rulesSeen = new Set(); // rule names offered in the recent-alerts filter

  function el(tag, attrs, text) {
    const e = tag.startsWith("svg:") ? document.createElementNS(NS, tag.slice(4)) : document.createElement(tag);
    for (const k in attrs || {}) e.setAttribute(k, attrs[k]);
    if (text !== undefined) e.textContent = text;
    return e;
  }
  // A server that admits only holders of a token answers 401; the page
  // then asks for one and keeps it for this tab only (sessionStorage).
  const tokenKey = "orbitwatch-token";
  async function getJSON(path) {
    const headers = {Accept: "application/json"};
    const token = sessionStorage.getItem(tokenKey);
    if (token) headers.Authorization = "Bearer " + token;
    const r = await fetch(path, {headers: headers});
    const body = await r.json().catch(() => ({error: r.statusText}));
    if (r.status === 401) $("token-form").hidden = false;
    if (!r.ok) throw new Error(body.error || r.statusText);
    return body;
  }
  $("token-form").addEventListener("submit", (e) => {
    e.preventDefault();
    sessionStorage.setItem(tokenKey, $("token").value.trim());
    location.reload();
  });
  const enc = encodeURIComponent;
  const fmtTime = (t) => t ? t.replace("T", " ").replace(/\.\d+/, "").replace("Z", " UTC") : "—";
  const orbitName = (o) => catalog && catalog.orbits[o] ? catalog.orbits[o].name : "orbit " + o;
  const log10p = (c) => Math.log10(c + 1);

  // Signature: one horizontal bar per orbit, length log10(count+1).
  function signatureChart(orbits) {
    const rowH = 19, left = 215, width = 540, right = 50;
    const h = orbits.length * rowH + 28;
    const max = Math.max(1, ...orbits.map(log10p));
    const svg = el("svg:svg", {viewBox: `0 0 ${width} ${h}`, role: "img", "aria-label": "orbit counts on a log scale"});
    const scale = (width - left - right) / Math.ceil(max);
    for (let d = 0; d <= Math.ceil(max); d++) {
      const x = left + d * scale;
      svg.append(el("svg:line", {class: "axis", x1: x, x2: x, y1: 4, y2: h - 20}));
      svg.append(el("svg:text", {x: x, y: h - 6, "font-size": 10, "text-anchor": "middle"}, d === 0 ? "0" : "1e" + d));
    }
    orbits.forEach((c, o) => {
      const y = 6 + o * rowH;
      const g = el("svg:g", {class: "orbit-bar", "data-orbit": o});
      g.append(el("svg:text", {x: left - 6, y: y + 11, "font-size": 12, "text-anchor": "end"}, `${o} ${orbitName(o)}`));
      const w = Math.max(c > 0 ? 1.5 : 0, log10p(c) * scale);
      const bar = el("svg:rect", {class: "bar", x: left, y: y + 2, width: w.toFixed(1), height: rowH - 5});
      bar.append(el("svg:title", {}, `${orbitName(o)}: ${c}`));
      g.append(bar);
      g.append(el("svg:text", {x: left + w + 4, y: y + 11, "font-size": 10}, String(c)));
      svg.append(g);
    });
    return svg;
  }

  // History: one line per chosen orbit over event time, y = log10(count+1).
  const palette = ["#1f6f78", "#b4531f", "#6b4c9a", "#2f7d32", "#9b2335", "#8a6d00"];
  function historyChart(versions, orbits) {
    const width = 900, height = 240, left = 48, right = 170, top = 10, bottom = 28;
    const svg = el("svg:svg", {viewBox: `0 0 ${width} ${height}`, role: "img", "aria-label": "orbit counts over event time"});
    if (versions.length === 0 || orbits.length === 0) {
      svg.append(el("svg:text", {x: 10, y: 30}, versions.length === 0 ? "no history yet" : "choose orbits above"));
      return svg;
    }
    const ts = versions.map((v) => Date.parse(v.event_time || 0));
    const t0 = Math.min(...ts), t1 = Math.max(...ts, t0 + 1);
    let ymax = 1;
    for (const v of versions) for (const o of orbits) ymax = Math.max(ymax, log10p(v.orbits[o]));
    ymax = Math.ceil(ymax);
    const X = (t) => left + (t - t0) / (t1 - t0) * (width - left - right);
    const Y = (c) => top + (1 - log10p(c) / ymax) * (height - top - bottom);
    for (let d = 0; d <= ymax; d++) {
      const y = top + (1 - d / ymax) * (height - top - bottom);
      svg.append(el("svg:line", {class: "axis", x1: left, x2: width - right, y1: y, y2: y}));
      svg.append(el("svg:text", {x: left - 4, y: y + 4, "font-size": 10, "text-anchor": "end"}, d === 0 ? "0" : "1e" + d));
    }
    svg.append(el("svg:text", {x: left, y: height - 6, "font-size": 10}, fmtTime(versions[0].event_time)));
    svg.append(el("svg:text", {x: width - right, y: height - 6, "font-size": 10, "text-anchor": "end"}, fmtTime(versions[versions.length - 1].event_time)));
    orbits.forEach((o, i) => {
      const colour = palette[i % palette.length];
      let d = "";
      versions.forEach((v, k) => {
        const x = X(ts[k]).toFixed(1), y = Y(v.orbits[o]).toFixed(1);
        d += (k === 0 ? "M" : " H" + x + " V") + (k === 0 ? x + " " + y : y);
      });
      d += " H" + (width - right);
      svg.append(el("svg:path", {class: "series", "data-orbit": o, d: d, fill: "none", stroke: colour, "stroke-width": 2}));
      svg.append(el("svg:text", {x: width - right + 8, y: top + 14 + i * 16, "font-size": 11, fill: colour}, `${o} ${orbitName(o)}`));
    });
    return svg;
  }

  // Neighbourhood: the node in the middle, its neighbours on a circle,
  // edges among the neighbours drawn as chords.
  function neighbourChart(nb) {
    const size = 360, c = size / 2, r = 140;
    const svg = el("svg:svg", {viewBox: `0 0 ${size} ${size}`, role: "img", "aria-label": `${nb.node} and ${nb.neighbors.length} neighbours`});
    const n = nb.neighbors.length;
    const pos = nb.neighbors.map((_, i) => [c + r * Math.cos(2 * Math.PI * i / Math.max(n, 1) - Math.PI / 2), c + r * Math.sin(2 * Math.PI * i / Math.max(n, 1) - Math.PI / 2)]);
    pos.forEach(([x, y]) => svg.append(el("svg:line", {class: "edge own", x1: c, y1: c, x2: x, y2: y})));
    for (const [i, j] of nb.edges) svg.append(el("svg:line", {class: "edge", x1: pos[i][0], y1: pos[i][1], x2: pos[j][0], y2: pos[j][1]}));
    nb.neighbors.forEach((id, i) => {
      const a = el("svg:a", {href: "#node=" + enc(id), class: "nbr-link"});
      const dot = el("svg:circle", {class: "nbr", cx: pos[i][0], cy: pos[i][1], r: 6});
      dot.append(el("svg:title", {}, id));
      a.append(dot);
      if (n <= 16) a.append(el("svg:text", {x: pos[i][0], y: pos[i][1] + (pos[i][1] < c ? -10 : 18), "font-size": 10, "text-anchor": "middle"}, id));
      svg.append(a);
    });
    svg.append(el("svg:circle", {class: "centre", cx: c, cy: c, r: 9}));
    svg.append(el("svg:text", {x: c, y: c + 24, "font-size": 11, "text-anchor": "middle", "font-weight": 600}, nb.node));
    return svg;
  }

  function alertItem(a, withNode) {
    const li = el("li", {class: "alert", "data-rule": a.rule});
    const head = el("div");
    head.append(el("span", {class: "rule"}, a.rule));
    head.append(document.createTextNode(` · score ${Number(a.score).toFixed(2)} (fires at ${a.fire}) · ${fmtTime(a.event_time)}`));
    li.append(head);
    if (withNode) {
      const b = el("button", {type: "button", class: "link"}, a.node);
      b.addEventListener("click", () => show(a.node));
      li.append(b);
    }
    const moves = (a.orbits || []).slice(0, 3).map((m) => `${m.name}: ${Math.round(m.before)} → ${m.after}`).join("; ");
    li.append(el("div", {class: "moves"}, moves));
    return li;
  }

  async function loadNode(id) {
    current = id;
    $("node-id").value = id;
    $("node-title").textContent = id;
    $("node-meta").textContent = "loading…";
    try {
      const v = await getJSON("/v1/nodes/" + enc(id));
      $("node-meta").textContent = `cut ${v.seq} · event time ${fmtTime(v.event_time)} · ${v.kind}, graphlets up to ${v.max_nodes} nodes`;
      $("sig-chart").replaceChildren(signatureChart(v.orbits));
      if (chosen.size === 0) {
        const top = v.orbits.map((c, o) => [c, o]).filter(([c]) => c > 0).sort((a, b) => b[0] - a[0]).slice(0, 3).map(([, o]) => o);
        chosen = new Set(top.length ? top : [0]);
      }
      orbitChoices(v.orbits.length);
    } catch (e) {
      $("node-meta").replaceChildren(el("span", {class: "err"}, e.message));
      $("sig-chart").replaceChildren();
      $("hist-chart").replaceChildren();
      $("nb-chart").replaceChildren();
      $("node-alert-list").replaceChildren();
      return;
    }
    await Promise.all([loadHistory(), loadNeighbours(id), loadNodeAlerts(id)]);
  }

  function orbitChoices(n) {
    const fs = $("hist-orbits");
    fs.replaceChildren(el("legend", {}, "Orbits shown"));
    for (let o = 0; o < n; o++) {
      const id = "orb-" + o;
      const box = el("input", {type: "checkbox", id: id, value: o});
      box.checked = chosen.has(o);
      box.addEventListener("change", () => { box.checked ? chosen.add(o) : chosen.delete(o); loadHistory(); });
      const lab = el("label", {for: id});
      lab.append(box, document.createTextNode(" " + o + " " + orbitName(o)));
      fs.append(lab);
    }
  }

  async function loadHistory() {
    if (!current) return;
    try {
      const h = await getJSON("/v1/nodes/" + enc(current) + "/history");
      $("hist-chart").replaceChildren(historyChart(h.versions, [...chosen].sort((a, b) => a - b)));
    } catch (e) {
      $("hist-chart").replaceChildren(el("p", {class: "err"}, e.message));
    }
  }

  async function loadNeighbours(id) {
    try {
      const nb = await getJSON("/v1/nodes/" + enc(id) + "/neighbors?limit=24");
      $("nb-cap").textContent = `Neighbourhood: ${nb.degree} neighbours` + (nb.neighbors.length < nb.degree ? `, ${nb.neighbors.length} drawn` : "");
      $("nb-chart").replaceChildren(neighbourChart(nb));
    } catch (e) {
      $("nb-chart").replaceChildren(el("p", {class: "err"}, e.message));
    }
  }

  async function loadNodeAlerts(id) {
    try {
      const r = await getJSON("/v1/alerts?limit=20&node=" + enc(id));
      const list = $("node-alert-list");
      list.replaceChildren(...r.alerts.map((a) => alertItem(a, false)));
      if (r.alerts.length === 0) list.append(el("li", {class: "none muted"}, "no alerts"));
    } catch (e) {
      $("node-alert-list").replaceChildren(el("li", {class: "err"}, e.message));
    }
  }

  async function pollAlerts() {
    try {
      const rule = $("rule-filter").value;
      const r = await getJSON("/v1/alerts?limit=25" + (rule ? "&rule=" + enc(rule) : ""));
      for (const al of r.alerts) {
        if (!rulesSeen.has(al.rule)) {
          rulesSeen.add(al.rule);
          $("rule-filter").append(el("option", {value: al.rule}, al.rule));
        }
      }
      $("recent").replaceChildren(...r.alerts.map((a) => alertItem(a, true)));
      if (r.alerts.length === 0) $("recent").append(el("li", {class: "none muted"}, "no alerts yet"));
    } catch (e) {
      $("recent").replaceChildren(el("li", {class: "err"}, e.message));
    }
  }

  async function pollStatus() {
    try {
      const s = await getJSON("/v1/status");
      const box = $("status");
      box.replaceChildren();
      for (const sh of s.shards) {
        if (sh.error) { box.append(el("span", {class: "lag-bad"}, `shard ${sh.shard}: ${sh.error}`)); continue; }
        const span = el("span", {class: "shard-status"});
        span.append(document.createTextNode(`shard ${sh.shard} of ${sh.shard_count} · cut ${sh.cut_seq} · `));
        span.append(el("span", {class: sh.lag > 5000 ? "lag-bad" : ""}, `lag ${sh.lag}`));
        span.append(document.createTextNode(` · ${sh.applied} events · watermark ${fmtTime(sh.watermark)}` + (sh.ready ? "" : " · catching up")));
        box.append(span);
      }
    } catch (e) {
      $("status").replaceChildren(el("span", {class: "lag-bad"}, "status: " + e.message));
    }
  }

  function show(id) {
    location.hash = "node=" + enc(id);
  }
  function fromHash() {
    const m = location.hash.match(/^#node=(.+)$/);
    if (m) { const id = decodeURIComponent(m[1]); if (id !== current) chosen = new Set(); loadNode(id); }
  }

  $("find").addEventListener("submit", (e) => {
    e.preventDefault();
    const id = $("node-id").value.trim();
    if (id) { if ("#node=" + enc(id) === location.hash) loadNode(id); else show(id); }
  });
  window.addEventListener("hashchange", fromHash);

  $("rule-filter").addEventListener("change", pollAlerts);
  getJSON("/v1/catalog").then((c) => { catalog = c; }).catch(() => {}).finally(() => {
    fromHash();
    pollAlerts();
    pollStatus();
    setInterval(pollAlerts, 3000);
    setInterval(pollStatus, 2000);
    setInterval(() => { if (current) { loadNodeAlerts(current); } }, 5000);
  });
})();
