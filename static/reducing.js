// rankscope reduction page: polls /api/reducing for the streamed file's progress, moves on
// to the session when it is done, and sends the Cancel button's POST without a reload.
(function () {
  "use strict";

  const box = document.getElementById("reduction");
  if (!box) return;
  const bar = document.getElementById("reduction-bar");
  const text = document.getElementById("reduction-text");
  const message = document.getElementById("reduction-message");
  const form = document.getElementById("cancel-form");
  const button = document.getElementById("cancel-button");
  const open = document.getElementById("reduction-open");
  const link = document.getElementById("reduction-link");
  const EVERY_MS = 500;

  function show(s) {
    box.dataset.state = s.state;
    bar.value = s.fraction;
    bar.textContent = Math.round(s.fraction * 100) + "%";
    text.textContent = s.rows.toLocaleString("en-US") + " rows read (" +
      (s.fraction * 100).toFixed(1) + "%)";
    if (s.stopping) { button.disabled = true; button.textContent = "Cancelling…"; }
    if (s.state === "running") return true;
    form.hidden = true;
    message.hidden = false;
    message.textContent = (s.state === "cancelled"
      ? "The reduction was cancelled; no session was made. " : "") + (s.message || "");
    if (s.state === "done" && s.url) {
      link.href = s.url;
      open.hidden = false;
      window.location.assign(s.url);
    }
    return false;
  }

  function poll() {
    fetch("/api/reducing", { headers: { "Accept": "application/json" } })
      .then((r) => r.json())
      .then((s) => { if (show(s)) setTimeout(poll, EVERY_MS); })
      .catch(() => {
        message.hidden = false;
        message.textContent = "The server does not answer; is rankscope still running?";
        setTimeout(poll, EVERY_MS * 4);
      });
  }

  form.addEventListener("submit", (e) => {
    e.preventDefault();
    button.disabled = true;
    button.textContent = "Cancelling…";
    fetch("/api/reducing/cancel", { method: "POST", headers: { "Accept": "application/json" } })
      .then((r) => r.json()).then(show).catch(() => { button.disabled = false; });
  });

  if (box.dataset.state === "running") poll();
  else if (box.dataset.state === "done" && !open.hidden) window.location.assign(link.href);
})();
