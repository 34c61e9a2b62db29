// rankscope page behaviour: upload with progress, posting versioned design changes, swapping
// the server-rendered workspace in place (also when others change the session), drawing
// figures, sorting tables, the start page's rename and delete. No dependencies.
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

  // The view a change is made on: its version goes with the change, so the server can tell
  // a change made on an older view (someone else changed the session meanwhile).
  function viewRoot() {
    return document.getElementById("workspace") || document.getElementById("overview");
  }

  function currentRevision() {
    const root = viewRoot();
    return root ? root.dataset.revision : undefined;
  }

  function newChangeId() {
    // getRandomValues works on plain http too (randomUUID needs a secure context).
    const bytes = new Uint8Array(12);
    crypto.getRandomValues(bytes);
    return Array.from(bytes, (b) => b.toString(16).padStart(2, "0")).join("");
  }

  function versioned(body) {
    const out = Object.assign({}, body || {});
    const root = viewRoot();
    const version = root ? Number(root.dataset.version) : NaN;
    if (!isNaN(version)) out.base_version = version;
    out.change_id = newChangeId();
    return out;
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
  // The newest revision the live feed announced; the view catches up when it differs.
  let announced = null;

  async function send(url, init) {
    // A change carries its id, so sending it again after a dropped connection is safe: the
    // server saves it at most once and answers the retry as it answered the first.
    for (let attempt = 0; ; attempt++) {
      try {
        return await fetch(url, init);
      } catch (e) {
        if (attempt >= 2) throw e;
        await new Promise((r) => setTimeout(r, 400 * (attempt + 1)));
      }
    }
  }

  function settle(response, data, after) {
    if (response.status === 409) {
      // Someone changed the session first and this change no longer fits: say so and
      // show the session as it now is.
      notify(data.error || "The session changed meanwhile; nothing was saved.", "warn");
      showFresh(data);
      return;
    }
    if (!response.ok) {
      notify(data.error || "That did not work (status " + response.status + ").");
      resetOverviewChoices();
      return;
    }
    clearNotice();
    if (data.message) notify(data.message, "info");
    if (data.rebased) {
      notify("Saved on top of changes someone else made meanwhile.", "info");
    }
    if (after) after(data);
    else swapWorkspace(data.html);
  }

  async function post(url, body, after) {
    if (busy) return;
    busy = true;
    document.body.classList.add("working");
    try {
      const response = await send(url, {
        method: "POST",
        headers: { "Content-Type": "application/json", Accept: "application/json" },
        body: body === undefined ? "{}" : JSON.stringify(body),
      });
      settle(response, await readJson(response), after);
    } catch (e) {
      notify("The server could not be reached: " + e.message);
    } finally {
      busy = false;
      document.body.classList.remove("working");
      catchUp();
    }
  }

  // A formula opens a new session on its columns; the page then moves there.
  async function startFromFormula(text) {
    if (busy) return;
    busy = true;
    clearNotice();
    document.body.classList.add("working");
    try {
      const response = await fetch("/api/s/" + sessionId() + "/formula", {
        method: "POST",
        headers: { "Content-Type": "application/json", Accept: "application/json" },
        body: JSON.stringify({ formula: text }),
      });
      const data = await readJson(response);
      if (response.ok && data.url) { window.location.assign(data.url); return; }
      notify(data.error || "The formula could not be used.");
    } catch (e) {
      notify("The server could not be reached: " + e.message);
    } finally {
      busy = false;
      document.body.classList.remove("working");
    }
  }

  async function importRecipe(input) {
    if (busy || !input.files.length) return;
    busy = true;
    document.body.classList.add("working");
    const data = new FormData();
    data.append("file", input.files[0], input.files[0].name);
    const v = versioned({});
    if (v.base_version !== undefined) data.append("base_version", String(v.base_version));
    data.append("import_id", v.change_id);
    try {
      const response = await send("/api/s/" + sessionId() + "/recipe", {
        method: "POST", headers: { Accept: "application/json" }, body: data,
      });
      settle(response, await readJson(response));
    } catch (e) {
      notify("The server could not be reached: " + e.message);
    } finally {
      input.value = "";
      busy = false;
      document.body.classList.remove("working");
      catchUp();
    }
  }

  function showFresh(data) {
    if (document.getElementById("workspace") && data.html) swapWorkspace(data.html);
    else refresh();
  }

  // ---- live refresh ---------------------------------------------------------------
  let refreshing = false;

  async function refresh() {
    const sid = sessionId();
    if (!sid || refreshing) return;
    refreshing = true;
    try {
      if (document.getElementById("workspace")) {
        const r = await fetch("/s/" + sid + "/workspace");
        if (r.ok) swapWorkspace(await r.text(), true);
      } else if (document.getElementById("overview")) {
        const r = await fetch(window.location.pathname);
        if (r.ok) {
          const doc = new DOMParser().parseFromString(await r.text(), "text/html");
          const fresh = doc.getElementById("overview");
          const old = document.getElementById("overview");
          if (fresh && old) old.replaceWith(fresh);
        }
      }
    } finally {
      refreshing = false;
    }
    catchUp();
  }

  // A revision is "version-microseconds": the version grows with every change, the time
  // with anything else shown (a title, a pin).
  function newer(a, b) {
    const [va, ta] = String(a).split("-").map(Number);
    const [vb, tb] = String(b).split("-").map(Number);
    if (!Number.isFinite(va) || !Number.isFinite(vb)) return a !== b;
    return va > vb || (va === vb && ta > tb);
  }

  // Fetch the workspace again only when the feed announced a state newer than the one
  // shown: an announcement this page's own change already brought (the feed may say so
  // before or after the answer comes) asks for nothing.
  function catchUp() {
    if (!busy && !refreshing && announced && newer(announced, currentRevision())) refresh();
  }

  function announce(revision) {
    announced = revision;
    catchUp();
  }

  function resetOverviewChoices() {
    // A refused kind or response choice: show again what the session really holds.
    document.querySelectorAll("#overview select").forEach((sel) => {
      for (const o of sel.options) o.selected = o.defaultSelected;
    });
  }

  function typedValues(root) {
    // What the user has typed or chosen but not yet sent, by element id.
    const kept = {};
    root.querySelectorAll("input[id], select[id], textarea[id]").forEach((el) => {
      if (el.type === "file" || el.type === "hidden") return;
      if (el.type === "checkbox" || el.type === "radio") {
        if (el.checked !== el.defaultChecked) kept[el.id] = { checked: el.checked };
      } else if (el.tagName === "SELECT") {
        const chosen = Array.from(el.options).some((o) => o.selected !== o.defaultSelected);
        if (chosen) kept[el.id] = { value: el.value };
      } else if (el.value !== el.defaultValue) {
        kept[el.id] = { value: el.value };
      }
    });
    return kept;
  }

  function swapWorkspace(html, fromOthers) {
    const old = document.getElementById("workspace");
    if (!old || !html) return;
    const focusedId = document.activeElement && document.activeElement.id;
    const openControls = Array.from(old.querySelectorAll("details.control"))
      .map((d) => d.open);
    // A change by someone else must not wipe what this user is in the middle of typing.
    const typed = fromOthers ? typedValues(old) : {};
    // A wide page keeps its drawn figures: Plotly.react then updates each in place (and
    // only once it comes near the view) instead of building it again from nothing.
    const kept = isWide(old) ? drawnFigures(old) : {};
    const holder = document.createElement("div");
    holder.innerHTML = html;
    const fresh = holder.firstElementChild;
    if (isWide(fresh)) {
      Object.keys(kept).forEach((id) => {
        const empty = fresh.querySelector("#" + id);
        if (empty) empty.replaceWith(kept[id]);
      });
    }
    old.replaceWith(fresh);
    Object.keys(typed).forEach((id) => {
      const el = document.getElementById(id);
      if (!el) return;
      if ("checked" in typed[id]) el.checked = typed[id].checked;
      else el.value = typed[id].value;
    });
    // Keep the panels the user opened open across updates.
    fresh.querySelectorAll("details.control").forEach((d, i) => {
      if (openControls[i]) d.open = true;
    });
    drawFigures();
    // What draws itself from the fragment (wide.js: paged tables, blocks) does so now.
    document.dispatchEvent(new CustomEvent("rankscope:swapped"));
    // The title lives outside the fragment; someone may have renamed the session.
    const title = document.getElementById("session-title");
    if (title && fresh.dataset.title) title.textContent = fresh.dataset.title;
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
    post("/api/s/" + sid + "/changes", versioned(change),
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
    if (!el || !window.Plotly) return;
    if (!fig) {
      // A kept figure (wide page) whose data is gone is cleared, not left showing the old.
      if (el.classList.contains("js-plotly-plot")) window.Plotly.purge(el);
      shown.delete(el);
      return;
    }
    drawSoon(el, () => window.Plotly.react(el, fig.data, fig.layout,
      { responsive: true, displaylogo: false, modeBarButtonsToRemove: ["sendDataToCloud"] }), fig);
  }

  // ---- figures of a wide page: drawn when they come near the view ---------------------
  // The figures a wide page redraws after each change that can keep their element (the
  // one block's own heatmap is fetched again by wide.js, so it is not among them).
  const KEPT_FIGURES = ["fig-inflation", "fig-spectrum", "fig-ridge", "fig-blocks"];

  function isWide(root) {
    return !!(root && root.querySelector(".paged"));
  }

  function drawnFigures(root) {
    const out = {};
    KEPT_FIGURES.forEach((id) => {
      const el = root.querySelector("#" + id);
      if (el && el.classList.contains("js-plotly-plot")) out[id] = el;
    });
    return out;
  }

  // Drawings waiting for their figure to come near the view, by element; and the figure
  // (as JSON text) each kept element shows.
  const unseen = new Map();
  const shown = new WeakMap();
  let seer = null;

  function drawNow(el, plot, key) {
    unseen.delete(el);
    if (seer) seer.unobserve(el);
    shown.delete(el);
    let done;
    try { done = Promise.resolve(plot()); } catch (e) { done = Promise.reject(e); }
    done.then(() => { if (key !== undefined) shown.set(el, key); }).catch(() => {}).then(() => {
      if (!unseen.has(el)) delete el.dataset.pending;
    });
  }

  // plot() now on a narrow page (as it always was); on a wide one, once the figure is
  // within 300 px of the view (until then a kept figure shows its last drawing, out of
  // sight), so a change repaints what is on screen first. data-pending marks a figure
  // not yet drawn with the state shown.
  // fig: the figure plot() draws; a kept element that shows it already is left as it is (a
  // basis choice or a ridge penalty leaves the correlations, say, as they were).
  function drawSoon(el, plot, fig) {
    if (!isWide(document.getElementById("workspace")) || !("IntersectionObserver" in window)) {
      plot();
      return;
    }
    unseen.forEach((fn, other) => {  // figures swapped out before they were drawn
      if (!other.isConnected) { unseen.delete(other); if (seer) seer.unobserve(other); }
    });
    const key = fig === undefined ? undefined : JSON.stringify(fig);
    if (key !== undefined && shown.get(el) === key && el.classList.contains("js-plotly-plot")) {
      unseen.delete(el);
      if (seer) seer.unobserve(el);
      delete el.dataset.pending;
      return;
    }
    el.dataset.pending = "1";
    unseen.set(el, { plot: plot, key: key });
    if (!seer) {
      seer = new IntersectionObserver((entries) => {
        entries.forEach((e) => {
          const job = unseen.get(e.target);
          if (!e.isIntersecting || !job) return;
          if (!e.target.isConnected) { unseen.delete(e.target); seer.unobserve(e.target); return; }
          drawNow(e.target, job.plot, job.key);
        });
      }, { rootMargin: "300px 0px" });
    }
    seer.unobserve(el); // observed again: its first report comes with the new drawing
    seer.observe(el);
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
    if (!figs["heatmap-spearman"] && !spearmanOnRequest()) heatmapMethod = "pearson";
    document.querySelectorAll("[data-heatmap-switch]").forEach((r) => {
      r.checked = r.value === heatmapMethod;
    });
    drawHeatmap(figs);
  }

  function drawHeatmap(figs) {
    const el = document.getElementById("fig-heatmap");
    if (!el) return;
    if (heatmapMethod === "spearman" && !figs["heatmap-spearman"]) {
      fetchSpearman(figs);
      return;
    }
    el.dataset.method = heatmapMethod;
    draw("fig-heatmap", figs["heatmap-" + heatmapMethod]);
  }

  // A refit made on the factor alone has no rank correlations (they need the rows): the
  // Spearman switch then asks the server to compute them from the rows.
  function spearmanOnRequest() {
    return !!document.querySelector("[data-heatmap-switch][data-spearman-fetch]");
  }

  async function fetchSpearman(figs) {
    const sid = sessionId();
    const note = document.getElementById("spearman-note");
    if (note) { note.hidden = false; note.textContent = "Computing Spearman correlations from the rows…"; }
    try {
      const response = await fetch("/api/s/" + sid + "/spearman", { headers: { Accept: "application/json" } });
      const data = await readJson(response);
      if (!response.ok || !data.figure) {
        if (note) note.textContent = (data && data.error) || "Spearman correlations could not be computed.";
        return;
      }
      if (sid !== sessionId()) return;
      figs["heatmap-spearman"] = data.figure;
      const holder = document.getElementById("figure-data");
      if (holder) holder.textContent = JSON.stringify(figs);
      if (note) note.textContent = data.note;
      if (heatmapMethod === "spearman") drawHeatmap(figs);
    } catch (e) {
      if (note) note.textContent = "The server could not be reached: " + e.message;
    }
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
      post("/api/s/" + sessionId() + "/" + target.dataset.action, versioned({}));
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
    if (target.dataset.rename) { showRename(target.dataset.rename, true); return; }
    if (target.hasAttribute("data-rename-cancel")) {
      showRename(target.closest("form").dataset.renameForm, false);
      return;
    }
    if (target.dataset.delete) { deleteSession(target.dataset.delete); return; }
    if (target.dataset.sort) sortTable(target);
  });

  document.addEventListener("submit", (e) => {
    const form = e.target;
    if (form.id === "upload-form" || form.id === "import-form") { e.preventDefault(); return; }
    if (form.dataset.renameForm) {
      e.preventDefault();
      renameSession(form);
      return;
    }
    if (form.id === "formula-form") {
      e.preventDefault();
      startFromFormula(form.elements.namedItem("formula").value);
      return;
    }
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
    if (el.id === "import-file") {
      importRecipe(el);
    } else if (el.dataset.kindFor && el.value) {
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

  // ---- start page: recent sessions --------------------------------------------------
  function sessionRow(sid) {
    return document.querySelector('[data-session-row="' + sid + '"]');
  }

  function showRename(sid, open) {
    const row = sessionRow(sid);
    if (!row) return;
    const form = row.querySelector("form[data-rename-form]");
    form.hidden = !open;
    row.querySelector(".row-actions").hidden = open;
    if (open) form.elements.namedItem("title").focus();
  }

  async function renameSession(form) {
    const sid = form.dataset.renameForm;
    const title = form.elements.namedItem("title").value;
    try {
      const r = await fetch("/api/s/" + sid + "/title", {
        method: "POST",
        headers: { "Content-Type": "application/json", Accept: "application/json" },
        body: JSON.stringify({ title: title }),
      });
      const data = await readJson(r);
      if (!r.ok) { notify(data.error || "The session could not be renamed."); return; }
      clearNotice();
      const link = sessionRow(sid).querySelector(".session-link");
      link.textContent = data.title;
      form.elements.namedItem("title").defaultValue = data.title;
      showRename(sid, false);
    } catch (e) {
      notify("The server could not be reached: " + e.message);
    }
  }

  async function deleteSession(sid) {
    const row = sessionRow(sid);
    const title = row ? row.querySelector(".session-link").textContent : "this session";
    if (!window.confirm("Delete “" + title + "” with its history and pinned fits? " +
      "Links to it stop working. This cannot be undone.")) return;
    try {
      const r = await fetch("/api/s/" + sid, { method: "DELETE", headers: { Accept: "application/json" } });
      const data = await readJson(r);
      if (!r.ok) { notify(data.error || "The session could not be deleted."); return; }
      if (row) row.remove();
      notify("Deleted “" + title + "”.", "info");
    } catch (e) {
      notify("The server could not be reached: " + e.message);
    }
  }

  // What the live feed (live.js) needs from this file.
  window.rankscope = { announce: announce, notify: notify, revision: currentRevision,
    drawFigures: drawFigures, drawSoon: drawSoon };

  setupUpload();
  drawFigures();
  // A link's key (?t=…) is kept in a cookie by the server; take it out of the address bar
  // so it is not bookmarked or shown over a shoulder by accident.
  if (window.location.search.indexOf("t=") >= 0 && window.history.replaceState) {
    const url = new URL(window.location.href);
    url.searchParams.delete("t");
    window.history.replaceState(null, "", url.pathname + url.search + url.hash);
  }
})();
