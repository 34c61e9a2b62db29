// rankscope live session: reads the session's server-sent events (version and viewer
// count), tells rankscope.js when the view is behind, and runs the Share dialog.
(function () {
  "use strict";

  const bar = document.getElementById("session-bar");
  if (!bar || !window.EventSource) return;
  const sid = bar.dataset.session;
  const rs = window.rankscope;
  const viewers = document.getElementById("viewers");
  const count = document.getElementById("viewer-count");

  function showViewers(n) {
    count.textContent = String(n);
    viewers.hidden = false;
    viewers.classList.remove("offline");
    viewers.title = n === 1 ? "Only you have this session open"
      : n + " browser tabs have this session open, yours included";
  }

  // EventSource reconnects by itself (after the "retry" the server sends) when a feed
  // ends (the server ends quiet feeds now and then) or the network drops; the first event
  // after that brings the view up to date. A feed refused with a status (429 or 503 when
  // too many pages are open, 403, 404) is closed for good by the browser, so it is tried
  // again here, waiting longer each time (with a little randomness, so that many pages
  // refused together do not all come back at once).
  const FIRST_WAIT_MS = 5000;
  const LONGEST_WAIT_MS = 60000;
  let feed = null;
  let wait = FIRST_WAIT_MS;
  let again = null;
  let stopped = false;

  function connect() {
    again = null;
    const source = new EventSource("/api/s/" + sid + "/events");
    feed = source;
    source.addEventListener("state", (e) => {
      let state;
      try { state = JSON.parse(e.data); } catch (err) { return; }
      wait = FIRST_WAIT_MS;
      showViewers(state.viewers);
      rs.announce(state.revision);
    });
    source.addEventListener("gone", () => {
      stop();
      viewers.hidden = true;
      rs.notify("This session was deleted: nothing here can be saved any more.", "warn");
      document.querySelectorAll("#workspace button, #workspace input, #workspace select, " +
        "#overview button, #overview select").forEach((el) => { el.disabled = true; });
    });
    source.addEventListener("error", () => {
      // Shown greyed until the feed is back.
      viewers.classList.add("offline");
      if (source.readyState !== EventSource.CLOSED || stopped || again) return;
      viewers.title = "This page is not updating by itself at the moment (reload it to " +
        "see the latest); it tries again shortly";
      again = setTimeout(connect, wait + Math.random() * 1000);
      wait = Math.min(wait * 2, LONGEST_WAIT_MS);
    });
  }

  function stop() {
    stopped = true;
    if (again) clearTimeout(again);
    if (feed) feed.close();
  }

  connect();
  window.addEventListener("pagehide", stop);

  // ---- share dialog -----------------------------------------------------------------
  const dialog = document.getElementById("share-dialog");

  function fill(role, url) {
    const row = document.getElementById("share-" + role + "-row");
    const input = document.getElementById("share-" + role);
    row.hidden = !url;
    input.value = url || "";
  }

  async function openShare() {
    try {
      const r = await fetch("/api/s/" + sid + "/links", { headers: { Accept: "application/json" } });
      const data = await r.json();
      if (!r.ok) { rs.notify(data.error || "The links could not be shown."); return; }
      fill("edit", data.edit);
      fill("view", data.view);
      document.getElementById("share-note").textContent = data.note || "";
      if (dialog.showModal) dialog.showModal(); else dialog.setAttribute("open", "");
    } catch (e) {
      rs.notify("The server could not be reached: " + e.message);
    }
  }

  async function copy(id, button) {
    const input = document.getElementById(id);
    input.select();
    let done = false;
    try {
      // The clipboard API needs a secure context; on a plain-http network address the
      // older command still works.
      if (navigator.clipboard && window.isSecureContext) {
        await navigator.clipboard.writeText(input.value);
        done = true;
      } else {
        done = document.execCommand("copy");
      }
    } catch (e) {
      done = false;
    }
    button.textContent = done ? "Copied" : "Select and copy";
    setTimeout(() => { button.textContent = "Copy"; }, 1800);
  }

  document.getElementById("share-button").addEventListener("click", openShare);
  // A chosen download closes its menu (the file comes as an attachment; the page stays).
  const menu = document.getElementById("download-menu");
  menu.addEventListener("click", (e) => {
    if (e.target.closest("a[data-download]")) setTimeout(() => { menu.open = false; }, 0);
  });
  dialog.addEventListener("click", (e) => {
    const b = e.target.closest("button[data-copy]");
    if (b) copy(b.dataset.copy, b);
  });
})();
