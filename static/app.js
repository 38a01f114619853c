// Tallyroom, every page: what the Content-Security-Policy keeps out of the HTML.
// - every htmx request carries this session's token (from <meta name="csrf-token">);
// - Escape fires "tallyroom-escape" on the focused element, for hx-trigger (no eval);
// - [data-history-back] links go back a page;
// - a request the database was too busy to take (503) says so at the top of the page (the
//   worksheet's value fields say it beside the field and send the value again themselves).
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

  // The sentence of an error answer (templates/error.html's message block).
  function errorSentence(xhr) {
    const answer = new DOMParser().parseFromString(xhr.responseText || "", "text/html");
    const sentence = answer.querySelector("[data-error-message]");
    return sentence ? sentence.textContent : "The server could not take this request.";
  }

  window.TallyroomErrors = { sentence: errorSentence };

  document.addEventListener("htmx:responseError", function (event) {
    const elt = event.detail.elt;
    if (event.detail.xhr.status !== 503 || (elt.matches && elt.matches("[data-value-field]"))) return;
    let notice = document.getElementById("request-notice");
    if (!notice) {
      notice = document.createElement("p");
      notice.id = "request-notice";
      notice.className = "request-notice field-error";
      notice.setAttribute("role", "alert");
      document.getElementById("main").prepend(notice);
    }
    notice.textContent = errorSentence(event.detail.xhr);
  });

  // Gone once a change goes through (a page's background reads say nothing about that).
  document.addEventListener("htmx:afterRequest", function (event) {
    const notice = document.getElementById("request-notice");
    const config = event.detail.requestConfig;
    if (notice && event.detail.successful && config && config.verb !== "get") notice.remove();
  });

  document.addEventListener("click", function (event) {
    const link = event.target.closest && event.target.closest("[data-history-back]");
    if (!link) return;
    event.preventDefault();
    history.back();
  });
})();
