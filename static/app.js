// Tallyroom, every page: what the Content-Security-Policy keeps out of the HTML.
// - every htmx request carries this session's token (from <meta name="csrf-token">);
// - Escape fires "tallyroom-escape" on the focused element, for hx-trigger (no eval);
// - [data-history-back] links go back a page.
(function () {
  "use strict";

  function csrfToken() {
    const meta = document.querySelector('meta[name="csrf-token"]');
    return meta ? meta.content : "";
  }

  window.TallyroomCsrf = { header: "X-CSRF-Token", token: csrfToken };

  document.addEventListener("htmx:configRequest", function (event) {
    event.detail.headers["X-CSRF-Token"] = csrfToken();
  });

  document.addEventListener("keydown", function (event) {
    if (event.key !== "Escape" || !event.target || !event.target.dispatchEvent) return;
    event.target.dispatchEvent(new CustomEvent("tallyroom-escape", { bubbles: true }));
  });

  document.addEventListener("click", function (event) {
    const link = event.target.closest && event.target.closest("[data-history-back]");
    if (!link) return;
    event.preventDefault();
    history.back();
  });
})();
