// Views opened on request: the previewed remedies and the rows behind the conditioning.
// Fetched when their panel opens (nothing is computed for a view nobody opened).
(function () {
  "use strict";

  function sessionId() {
    const el = document.querySelector("[data-session]");
    return el ? el.dataset.session : null;
  }

  function say(body, text) {
    const p = document.createElement("p");
    p.className = "error";
    p.textContent = text;
    body.replaceChildren(p);
  }

  // plotly.min.js is large and deferred: draw once it has loaded (checked for up to 30 s).
  function drawWhenReady(holder, fig, tries) {
    if (window.Plotly) {
      window.Plotly.react(holder, fig.data, fig.layout, { responsive: true, displaylogo: false });
    } else if (tries < 300) {
      setTimeout(() => drawWhenReady(holder, fig, tries + 1), 100);
    }
  }

  async function load(details) {
    const body = details.querySelector(".insight-body");
    if (!body || details.dataset.loaded) return;
    details.dataset.loaded = "1";
    const p = document.createElement("p");
    p.className = "muted";
    p.textContent = "Computing…";
    body.replaceChildren(p);
    try {
      const r = await fetch("/api/s/" + sessionId() + "/" + details.dataset.insight,
        { headers: { Accept: "application/json" } });
      const data = await r.json();
      if (!r.ok) { say(body, data.error || "The server refused."); delete details.dataset.loaded; return; }
      body.innerHTML = data.html;  // server-rendered, escaped by the template engine
      const fig = data.figure;
      const holder = body.querySelector(".figure");
      if (fig && holder) drawWhenReady(holder, fig, 0);
    } catch (e) {
      say(body, "The server could not be reached: " + e.message);
      delete details.dataset.loaded;
    }
  }

  // "toggle" does not bubble: listen in the capture phase, for panels swapped in later too.
  document.addEventListener("toggle", (e) => {
    const d = e.target;
    if (d instanceof HTMLDetailsElement && d.dataset.insight && d.open) load(d);
  }, true);

  // A remedy of several steps: one change each, in order, each on the version the last made.
  document.addEventListener("click", async (e) => {
    const button = e.target.closest("button[data-changes]");
    if (!button) return;
    const root = document.querySelector("[data-version]");
    let version = root ? Number(root.dataset.version) : NaN;
    button.disabled = true;
    for (const text of JSON.parse(button.dataset.changes)) {
      const body = { kind: "step", payload: JSON.parse(text),
        change_id: "r" + Math.random().toString(36).slice(2) + Date.now().toString(36) };
      if (!isNaN(version)) body.base_version = version;
      const r = await fetch("/api/s/" + sessionId() + "/changes?html=0", {
        method: "POST", headers: { "Content-Type": "application/json" },
        body: JSON.stringify(body) });
      const data = await r.json();
      if (!r.ok) {
        const panel = button.closest(".insight-body");
        if (panel) say(panel, data.error || "The change was refused.");
        break;
      }
      version = data.version;
    }
    window.location.reload();
  });
})();
