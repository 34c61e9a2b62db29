// rankscope page behaviour: upload with progress, posting design changes, swapping the
// server-rendered workspace in place, drawing figures, sorting tables. No dependencies.
(function () {
  "use strict";

  let heatmapMethod = "pearson";

  // ---- messages -------------------------------------------------------------------
  function notify(text, kind) {
    const box = document.getElementById("notice");
    if (!box) return;
    document.getElementById("notice-text").textContent = text;
    box.className = "notice " + (kind || "error");
    box.hidden = false;
  }

  function clearNotice() {
    const box = document.getElementById("notice");
    if (box) box.hidden = true;
  }

  async function readJson(response) {
    try {
      return await response.json();
    } catch (e) {
      return { error: "The server answered " + response.status + " without a message." };
    }
  }

  // ---- upload ---------------------------------------------------------------------
  function setupUpload() {
    const form = document.getElementById("upload-form");
    if (!form) return;
    const input = document.getElementById("file-input");
    const zone = document.getElementById("drop-zone");
    input.addEventListener("change", () => { if (input.files.length) send(input.files[0]); });
    ["dragenter", "dragover"].forEach((t) => zone.addEventListener(t, (e) => {
      e.preventDefault();
      zone.classList.add("over");
    }));
    ["dragleave", "drop"].forEach((t) => zone.addEventListener(t, (e) => {
      e.preventDefault();
      zone.classList.remove("over");
    }));
    zone.addEventListener("drop", (e) => {
      if (e.dataTransfer && e.dataTransfer.files.length) send(e.dataTransfer.files[0]);
    });

    function send(file) {
      clearNotice();
      const wrap = document.getElementById("upload-progress");
      const bar = document.getElementById("upload-bar");
      const status = document.getElementById("upload-status");
      wrap.hidden = false;
      bar.value = 0;
      status.textContent = "Sending " + file.name + "…";
      const data = new FormData();
      data.append("file", file, file.name);
      // XMLHttpRequest, not fetch: only it reports upload progress.
      const xhr = new XMLHttpRequest();
      xhr.open("POST", "/api/upload");
      xhr.upload.addEventListener("progress", (e) => {
        if (e.lengthComputable) bar.value = Math.round((100 * e.loaded) / e.total);
      });
      xhr.upload.addEventListener("load", () => {
        bar.value = 100;
        status.textContent = "Reading " + file.name + " on the server…";
      });
      xhr.addEventListener("load", () => {
        let body = {};
        try { body = JSON.parse(xhr.responseText); } catch (e) { body = {}; }
        if (xhr.status >= 200 && xhr.status < 300 && body.url) {
          status.textContent = "Read " + body.rows + " rows. Opening…";
          window.location.assign(body.url);
        } else {
          wrap.hidden = true;
          input.value = "";
          notify(body.error || "The upload failed (status " + xhr.status + ").");
        }
      });
      xhr.addEventListener("error", () => {
        wrap.hidden = true;
        notify("The upload could not reach the server. Is rankscope still running?");
      });
      xhr.send(data);
    }
  }

  // ---- changes --------------------------------------------------------------------
  function sessionId() {
    const el = document.querySelector("[data-session]");
    return el ? el.dataset.session : null;
  }

  function formChange(form) {
    const kind = form.dataset.change || "step";
    const payload = {};
    if (form.dataset.step) payload.step = form.dataset.step;
    const stepField = form.elements.namedItem("step");
    if (stepField && stepField.value) payload.step = stepField.value;
    for (const el of form.elements) {
      if (!el.name || el.name === "step" || el.disabled) continue;
      const only = el.dataset.only;
      if (only && only.split(" ").indexOf(payload.step) < 0) continue;
      const type = el.dataset.type || "text";
      if (type === "columns") {
        const chosen = el.type === "checkbox" ? el.checked : el.value !== "";
        if (chosen) (payload[el.name] = payload[el.name] || []).push(el.value);
        continue;
      }
      if (type === "flag") {
        if (el.checked) payload[el.name] = true;
        continue;
      }
      if (el.value === "") {
        if (type === "column_or_null") payload[el.name] = null;
        continue;
      }
      payload[el.name] = type === "number" ? Number(el.value) : el.value;
    }
    return { kind: kind, payload: payload };
  }

  let busy = false;

  async function post(url, body, after) {
    if (busy) return;
    busy = true;
    document.body.classList.add("working");
    try {
      const response = await fetch(url, {
        method: "POST",
        headers: { "Content-Type": "application/json", Accept: "application/json" },
        body: body === undefined ? "{}" : JSON.stringify(body),
      });
      const data = await readJson(response);
      if (!response.ok) {
        notify(data.error || "That did not work (status " + response.status + ").");
        resetOverviewChoices();
        return;
      }
      clearNotice();
      if (after) after(data);
      else swapWorkspace(data.html);
    } catch (e) {
      notify("The server could not be reached: " + e.message);
    } finally {
      busy = false;
      document.body.classList.remove("working");
    }
  }

  function resetOverviewChoices() {
    // A refused kind or response choice: show again what the session really holds.
    document.querySelectorAll("#overview select").forEach((sel) => {
      for (const o of sel.options) o.selected = o.defaultSelected;
    });
  }

  function swapWorkspace(html) {
    const old = document.getElementById("workspace");
    if (!old || !html) return;
    const focusedId = document.activeElement && document.activeElement.id;
    const openControls = Array.from(old.querySelectorAll("details.control"))
      .map((d) => d.open);
    const holder = document.createElement("div");
    holder.innerHTML = html;
    const fresh = holder.firstElementChild;
    old.replaceWith(fresh);
    // Keep the panels the user opened open across updates.
    fresh.querySelectorAll("details.control").forEach((d, i) => {
      if (openControls[i]) d.open = true;
    });
    drawFigures();
    const again = focusedId && document.getElementById(focusedId);
    if (again) again.focus();
    // Screen readers hear what changed; a removed button's focus returns to the history bar.
    const live = document.getElementById("announce");
    if (live) live.textContent = fresh.dataset.summary || "";
    if (!again && document.activeElement === document.body) {
      const bar = fresh.querySelector('[data-action="undo"]:not([disabled])');
      if (bar) bar.focus();
    }
  }

  function sendChange(change) {
    const sid = sessionId();
    const overview = document.getElementById("overview");
    post("/api/s/" + sid + "/changes", change,
      overview ? () => window.location.reload() : undefined);
  }

  // ---- figures --------------------------------------------------------------------
  function figureData() {
    const el = document.getElementById("figure-data");
    if (!el) return null;
    try { return JSON.parse(el.textContent); } catch (e) { return null; }
  }

  function draw(id, fig) {
    const el = document.getElementById(id);
    if (!el || !fig || !window.Plotly) return;
    window.Plotly.react(el, fig.data, fig.layout,
      { responsive: true, displaylogo: false, modeBarButtonsToRemove: ["sendDataToCloud"] });
  }

  function drawFigures() {
    const figs = figureData();
    if (!figs) return;
    if (!window.Plotly) {
      // plotly.min.js is large and deferred: draw once it has loaded.
      window.addEventListener("load", drawFigures, { once: true });
      return;
    }
    draw("fig-inflation", figs.inflation);
    draw("fig-spectrum", figs.spectrum);
    draw("fig-ridge", figs.ridge);
    if (!figs["heatmap-spearman"]) heatmapMethod = "pearson";
    document.querySelectorAll("[data-heatmap-switch]").forEach((r) => {
      r.checked = r.value === heatmapMethod;
    });
    drawHeatmap(figs);
  }

  function drawHeatmap(figs) {
    const el = document.getElementById("fig-heatmap");
    if (!el) return;
    el.dataset.method = heatmapMethod;
    draw("fig-heatmap", figs["heatmap-" + heatmapMethod]);
  }

  // ---- sorting --------------------------------------------------------------------
  function sortTable(button) {
    const th = button.closest("th");
    const table = button.closest("table");
    const col = Array.from(th.parentNode.children).indexOf(th);
    const asc = th.getAttribute("aria-sort") !== "ascending";
    table.querySelectorAll("th[aria-sort]").forEach((h) => h.removeAttribute("aria-sort"));
    th.setAttribute("aria-sort", asc ? "ascending" : "descending");
    const numeric = button.dataset.sort === "number";
    const body = table.tBodies[0];
    const rows = Array.from(body.rows);
    const key = (row) => {
      const cell = row.children[col];
      const raw = cell.dataset.value !== undefined ? cell.dataset.value : cell.textContent;
      if (!numeric) return raw.toLowerCase();
      const v = raw === "" ? NaN : Number(raw);
      return isNaN(v) ? -Infinity : v;
    };
    rows.sort((a, b) => {
      const ka = key(a), kb = key(b);
      const c = ka < kb ? -1 : ka > kb ? 1 : 0;
      return asc ? c : -c;
    });
    rows.forEach((r) => body.appendChild(r));
  }

  // ---- events ---------------------------------------------------------------------
  document.addEventListener("click", (e) => {
    const target = e.target.closest("button");
    if (!target) return;
    if (target.hasAttribute("data-dismiss-notice")) { clearNotice(); return; }
    if (target.dataset.change) { sendChange(JSON.parse(target.dataset.change)); return; }
    if (target.dataset.action === "undo" || target.dataset.action === "redo") {
      post("/api/s/" + sessionId() + "/" + target.dataset.action);
      return;
    }
    if (target.dataset.unpin) {
      fetch("/api/s/" + sessionId() + "/pins/" + target.dataset.unpin, { method: "DELETE" })
        .then(async (r) => {
          const data = await readJson(r);
          if (r.ok) swapWorkspace(data.html); else notify(data.error);
        });
      return;
    }
    if (target.dataset.sort) sortTable(target);
  });

  document.addEventListener("submit", (e) => {
    const form = e.target;
    if (form.id === "upload-form") { e.preventDefault(); return; }
    if (form.id === "pin-form") {
      e.preventDefault();
      const label = form.elements.namedItem("label").value;
      post("/api/s/" + sessionId() + "/pins", { label: label });
      return;
    }
    if (form.id === "compare-form") {
      e.preventDefault();
      const a = form.elements.namedItem("a").value;
      const b = form.elements.namedItem("b").value;
      const url = "/s/" + sessionId() + "/compare?a=" + encodeURIComponent(a) +
        "&b=" + encodeURIComponent(b);
      fetch(url).then(async (r) => {
        if (!r.ok) { notify((await readJson(r)).error || "The comparison failed."); return; }
        const holder = document.createElement("div");
        holder.innerHTML = await r.text();
        document.getElementById("compare-panel").replaceWith(holder.firstElementChild);
      });
      return;
    }
    if (form.dataset.step || form.dataset.change) {
      e.preventDefault();
      sendChange(formChange(form));
    }
  });

  document.addEventListener("change", (e) => {
    const el = e.target;
    if (el.dataset.kindFor && el.value) {
      sendChange({ kind: "step", payload: { step: "kind", column: el.dataset.kindFor, to: el.value } });
    } else if (el.hasAttribute("data-heatmap-switch")) {
      heatmapMethod = el.value;
      const figs = figureData();
      if (figs) drawHeatmap(figs);
    }
  });

  document.addEventListener("keydown", (e) => {
    const typing = /^(INPUT|SELECT|TEXTAREA)$/.test(document.activeElement.tagName);
    if (typing || !(e.ctrlKey || e.metaKey) || e.key.toLowerCase() !== "z") return;
    const which = e.shiftKey ? "redo" : "undo";
    const button = document.querySelector('[data-action="' + which + '"]');
    if (button && !button.disabled) { e.preventDefault(); button.click(); }
  });

  setupUpload();
  drawFigures();
})();
