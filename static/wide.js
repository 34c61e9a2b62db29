// The page of a wide design: full tables a page at a time (sorted and filtered on the server,
// drawn here from JSON pages), and the correlations block by block, with one block's own
// heatmap fetched when asked for. Keeps each table's sort, page and filter across the
// fragment swaps that follow a change. No dependencies.
(function () {
  "use strict";

  const tables = {}; // by table name: {sort, order, offset, limit, q, touched, open}
  let blockMethod = "pearson";
  let shownBlock = null; // the number of the block whose own heatmap is shown
  let spearman = null; // {revision, data} of the last Spearman summary fetched
  let filterTimer = null;

  function sessionId() {
    const el = document.querySelector("[data-session]");
    return el ? el.dataset.session : null;
  }

  function revision() {
    const ws = document.getElementById("workspace");
    return ws ? ws.dataset.revision : null;
  }

  function stateOf(name) {
    if (!tables[name]) tables[name] = { offset: 0, q: "" };
    return tables[name];
  }

  // ---- paged tables -----------------------------------------------------------------
  function header(page) {
    const tr = document.createElement("tr");
    page.columns.forEach((c) => {
      const th = document.createElement("th");
      th.scope = "col";
      if (c.number) th.className = "n";
      if (c.sortable) {
        const b = document.createElement("button");
        b.type = "button";
        b.dataset.key = c.key;
        b.textContent = c.label;
        th.appendChild(b);
        if (page.sort === c.key) {
          th.setAttribute("aria-sort", page.order === "asc" ? "ascending" : "descending");
        }
      } else {
        th.textContent = c.label;
      }
      tr.appendChild(th);
    });
    return tr;
  }

  function row(page, r) {
    const tr = document.createElement("tr");
    if (r.mark) tr.className = r.mark;
    if (r.column !== null && r.column !== undefined) tr.dataset.column = r.column;
    r.cells.forEach((text, i) => {
      const cell = document.createElement(i === 0 ? "th" : "td");
      if (i === 0) cell.scope = "row";
      if (page.columns[i] && page.columns[i].number) cell.className = "n";
      cell.textContent = text; // text only: names never become markup
      tr.appendChild(cell);
    });
    return tr;
  }

  // remember: the page's sort, order and offset become the table's state (not for the page
  // that came with a fragment while the user's own view is being fetched again).
  function render(box, page, remember = true) {
    const table = box.querySelector("table");
    table.tHead.replaceChildren(header(page));
    table.tBodies[0].replaceChildren(...page.rows.map((r) => row(page, r)));
    const last = page.offset + page.rows.length;
    const count = box.querySelector(".paged-count");
    if (page.matched) {
      count.textContent = (page.offset + 1).toLocaleString() + "–" + last.toLocaleString() +
        " of " + page.matched.toLocaleString() +
        (page.q ? " matching “" + page.q + "” (of " + page.total.toLocaleString() + ")" : "");
    } else {
      count.textContent = page.q ? "No row names a column matching “" + page.q + "”" : "No rows";
    }
    box.querySelector('[data-page="prev"]').disabled = page.offset <= 0;
    box.querySelector('[data-page="next"]').disabled = last >= page.matched;
    box.dataset.loaded = "1";
    box.dataset.sort = page.sort;
    box.dataset.order = page.order;
    if (remember) {
      Object.assign(stateOf(page.table), {
        sort: page.sort, order: page.order, offset: page.offset, limit: page.limit,
      });
    }
  }

  async function load(box) {
    const name = box.dataset.table;
    const s = stateOf(name);
    const ticket = String((Number(box.dataset.ticket) || 0) + 1);
    box.dataset.ticket = ticket;
    const params = new URLSearchParams({ offset: String(s.offset || 0) });
    if (s.limit) params.set("limit", String(s.limit));
    if (s.sort) params.set("sort", s.sort);
    if (s.order) params.set("order", s.order);
    if (s.q) params.set("q", s.q);
    box.classList.add("loading");
    const count = box.querySelector(".paged-count");
    try {
      const r = await fetch("/api/s/" + sessionId() + "/tables/" + name + "?" + params,
        { headers: { Accept: "application/json" } });
      const data = await r.json();
      if (box.dataset.ticket !== ticket || !box.isConnected) return; // a newer request won
      if (!r.ok) { count.textContent = data.error || "The table could not be read."; return; }
      render(box, data);
    } catch (e) {
      if (box.isConnected) count.textContent = "The server could not be reached: " + e.message;
    } finally {
      if (box.dataset.ticket === ticket) box.classList.remove("loading");
    }
  }

  function embedded(box) {
    const el = box.querySelector("script.page-data");
    if (!el) return null;
    try { return JSON.parse(el.textContent); } catch (e) { return null; }
  }

  function setupTables(root) {
    root.querySelectorAll(".paged").forEach((box) => {
      const s = stateOf(box.dataset.table);
      const input = box.querySelector("[data-filter]");
      if (input && s.q) input.value = s.q;
      const holder = box.closest("details[data-table-holder]");
      if (holder && s.open) holder.open = true; // its toggle event loads it
      if (holder && !holder.open) return;
      const page = embedded(box);
      // The page that came with the fragment is drawn at once; a table the user sorted,
      // paged or filtered asks again for the same view (shown dimmed until it comes).
      if (page) render(box, page, !s.touched);
      if (s.touched && (!holder || !s.open)) {
        box.classList.add("loading");
        load(box);
      } else if (!page && !holder) {
        load(box);
      }
    });
  }

  // ---- correlations block by block ----------------------------------------------------
  // plotly.js is some 5 MB of script: evaluating it holds the page for a second or more.
  // A wide page is read from its lead section first, so it loads plotly.js only when a
  // figure comes near the view (or one is asked for), then draws every figure.
  const PLOTLY = "/assets/plotly.min.js";
  let plotlyLoading = null;

  const waiting = []; // drawings that wait for plotly.js

  function loadPlotly() {
    if (window.Plotly) return Promise.resolve();
    if (!plotlyLoading) {
      plotlyLoading = new Promise((resolve, reject) => {
        const tag = document.createElement("script");
        tag.src = PLOTLY;
        tag.onload = () => {
          if (window.rankscope && window.rankscope.drawFigures) window.rankscope.drawFigures();
          waiting.splice(0).forEach((fn) => fn());
          resolve();
        };
        tag.onerror = () => { plotlyLoading = null; reject(new Error("plotly.js did not load")); };
        document.head.appendChild(tag);
      });
    }
    return plotlyLoading;
  }

  // fn once plotly.js is there: now, after the page's own deferred copy, or after the copy
  // loaded when a figure comes near the view. Never a reason to load it.
  function whenPlotly(fn) {
    if (window.Plotly) { fn(); return; }
    if (document.querySelector('script[src="' + PLOTLY + '"][defer]')) {
      window.addEventListener("load", fn, { once: true });
    } else {
      waiting.push(fn);
    }
  }

  let watcher = null;

  function watchFigures(root) {
    if (window.Plotly || document.querySelector('script[src="' + PLOTLY + '"][defer]')) return;
    const figures = root.querySelectorAll(".figure");
    if (!figures.length) return;
    if (!("IntersectionObserver" in window)) { loadPlotly(); return; }
    if (watcher) watcher.disconnect();
    watcher = new IntersectionObserver((entries) => {
      if (!entries.some((e) => e.isIntersecting)) return;
      watcher.disconnect();
      loadPlotly().catch(() => {});
    }, { rootMargin: "300px 0px" });
    figures.forEach((f) => watcher.observe(f));
  }

  function figureData() {
    const el = document.getElementById("figure-data");
    if (!el) return null;
    try { return JSON.parse(el.textContent); } catch (e) { return null; }
  }

  function plot(el, fig) {
    return window.Plotly.react(el, fig.data, fig.layout,
      { responsive: true, displaylogo: false, modeBarButtonsToRemove: ["sendDataToCloud"] });
  }

  function drawSummary(fig) {
    const el = document.getElementById("fig-blocks");
    if (!el || !fig) return;
    const draw = () => {
      const done = plot(el, fig);
      if (!el.dataset.clicks) {
        el.dataset.clicks = "1";
        // A click on a cell opens the block of its row.
        el.on("plotly_click", (ev) => {
          const pt = ev && ev.points && ev.points[0];
          if (pt && Array.isArray(pt.pointNumber)) showBlock(pt.pointNumber[0] + 1);
        });
      }
      return done;
    };
    whenPlotly(() => {
      if (!el.isConnected) return;
      // Drawn once it comes near the view (rankscope.js); in place when it was drawn before.
      const rs = window.rankscope;
      if (rs && rs.drawSoon) rs.drawSoon(el, draw, fig); else draw();
    });
  }

  function setChoices(blocks) {
    const select = document.getElementById("block-choice");
    if (!select || !blocks) return;
    select.replaceChildren(...blocks.map((b) => {
      const o = document.createElement("option");
      o.value = String(b.number);
      o.textContent = b.number + ". " + b.label + " (" + b.size + " column" +
        (b.size === 1 ? "" : "s") + (b.group ? ", move together" : "") + ")";
      return o;
    }));
  }

  async function summary() {
    const note = document.getElementById("blocks-note");
    if (blockMethod === "pearson") {
      if (note) note.hidden = true;
      const figs = figureData();
      drawSummary(figs && figs["blocks-pearson"]);
      return;
    }
    let data = spearman && spearman.revision === revision() ? spearman.data : null;
    if (!data) {
      if (note) { note.hidden = false; note.textContent = "Computing Spearman correlations…"; }
      try {
        const r = await fetch("/api/s/" + sessionId() + "/blocks?method=spearman",
          { headers: { Accept: "application/json" } });
        const body = await r.json();
        if (!r.ok) { if (note) note.textContent = body.error || "Spearman correlations could not be computed."; return; }
        data = body;
        spearman = { revision: revision(), data: body };
      } catch (e) {
        if (note) note.textContent = "The server could not be reached: " + e.message;
        return;
      }
    }
    if (blockMethod !== "spearman") return;
    if (note) { note.hidden = !data.note; note.textContent = data.note || ""; }
    setChoices(data.blocks);
    drawSummary(data.figure);
  }

  async function showBlock(number) {
    const el = document.getElementById("fig-block");
    const status = document.getElementById("block-status");
    if (!el) return;
    shownBlock = number;
    const select = document.getElementById("block-choice");
    if (select) select.value = String(number);
    if (status) status.textContent = "Drawing block " + number + "…";
    try {
      const r = await fetch("/api/s/" + sessionId() + "/blocks/" + number + "?method=" + blockMethod,
        { headers: { Accept: "application/json" } });
      const data = await r.json();
      if (shownBlock !== number) return;
      if (!r.ok) { if (status) status.textContent = data.error || "The block could not be drawn."; return; }
      const target = document.getElementById("fig-block");
      if (!target) return;
      target.hidden = false;
      target.dataset.block = String(number);
      whenPlotly(() => plot(target, data.figure));
      loadPlotly().catch(() => {});
      if (status) {
        status.textContent = "Block " + number + ": " + data.columns.length + " column" +
          (data.columns.length === 1 ? "" : "s") + ".";
      }
    } catch (e) {
      if (status) status.textContent = "The server could not be reached: " + e.message;
    }
  }

  function setup() {
    const ws = document.getElementById("workspace");
    if (!ws) return;
    // Also a narrow page that follows a wide one: its figures need plotly.js.
    watchFigures(ws);
    if (!ws.querySelector(".paged, #fig-blocks")) return;
    setupTables(ws);
    document.querySelectorAll("[data-block-switch]").forEach((r) => {
      r.checked = r.value === blockMethod;
    });
    if (blockMethod === "spearman" && spearman && spearman.revision !== revision()) spearman = null;
    summary();
    if (shownBlock !== null) showBlock(shownBlock);
  }

  // ---- events -----------------------------------------------------------------------
  document.addEventListener("click", (e) => {
    const sortButton = e.target.closest(".paged th button[data-key]");
    if (sortButton) {
      const box = sortButton.closest(".paged");
      const s = stateOf(box.dataset.table);
      const key = sortButton.dataset.key;
      const numeric = sortButton.closest("th").classList.contains("n");
      if (s.sort === key) s.order = s.order === "asc" ? "desc" : "asc";
      else { s.sort = key; s.order = numeric ? "desc" : "asc"; }
      s.offset = 0;
      s.touched = true;
      load(box);
      return;
    }
    const pager = e.target.closest(".paged button[data-page]");
    if (pager) {
      const box = pager.closest(".paged");
      const s = stateOf(box.dataset.table);
      const step = s.limit || 25;
      s.offset = Math.max((s.offset || 0) + (pager.dataset.page === "next" ? step : -step), 0);
      s.touched = true;
      load(box);
      return;
    }
    const opener = e.target.closest("button[data-open-block]");
    if (opener) {
      const section = document.getElementById("sec-correlations");
      if (section) section.scrollIntoView({ block: "start" });
      showBlock(Number(opener.dataset.openBlock));
    }
  });

  document.addEventListener("input", (e) => {
    const input = e.target.closest("[data-filter]");
    if (!input) return;
    const box = input.closest(".paged");
    const s = stateOf(box.dataset.table);
    clearTimeout(filterTimer);
    filterTimer = setTimeout(() => {
      s.q = input.value.trim();
      s.offset = 0;
      s.touched = true;
      load(box);
    }, 250);
  });

  document.addEventListener("submit", (e) => {
    if (e.target.id !== "block-form") return;
    e.preventDefault();
    showBlock(Number(e.target.elements.namedItem("block").value));
  });

  document.addEventListener("change", (e) => {
    if (!e.target.hasAttribute("data-block-switch")) return;
    blockMethod = e.target.value;
    summary();
    if (shownBlock !== null) showBlock(shownBlock);
  });

  // "toggle" does not bubble: listen in the capture phase, for panels swapped in later too.
  document.addEventListener("toggle", (e) => {
    const d = e.target;
    if (!(d instanceof HTMLDetailsElement)) return;
    // A view opened on request (insight.js) may bring a figure.
    if (d.dataset.insight && d.open && !window.Plotly) loadPlotly().catch(() => {});
    if (!d.dataset.tableHolder) return;
    const s = stateOf(d.dataset.tableHolder);
    s.open = d.open;
    const box = d.querySelector(".paged");
    if (d.open && box && !box.dataset.loaded) load(box);
  }, true);

  // rankscope.js swaps the workspace after every change (this user's or another's).
  document.addEventListener("rankscope:swapped", setup);
  setup();
})();
