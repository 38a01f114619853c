// Tallyroom, every page: what keyboard and screen-reader users need beyond the HTML.
// 1. A table that scrolls sideways inside its own box (narrow screens, the receptor lines) is
//    put on the Tab route, so it can be scrolled with the arrow keys; it leaves the route when
//    it fits again.
// 2. The page's one live region (#page-status, role=status, polite). Screen readers hear one
//    short status, never the text still being typed:
// - worksheet: once typing pauses (no input for PAUSE_MS and no value on its way), the scenario
//   the person is in: mitigated frequency, gap and required SIL, why the value was not read,
//   or that it is not saved yet (a busy database; again once it is saved);
// - room view: the shown scenario's figures once they have changed and stood still for
//   PAUSE_MS (the poll replaces the figures, never this region).
(function () {
  "use strict";

  function markScrollingTables() {
    document.querySelectorAll("table").forEach(function (table) {
      const scrolls = table.scrollWidth > table.clientWidth + 1 &&
        getComputedStyle(table).overflowX !== "visible";
      if (scrolls && !table.hasAttribute("tabindex")) {
        table.setAttribute("tabindex", "0");
        table.dataset.scrollFocus = "";
      } else if (!scrolls && table.dataset.scrollFocus !== undefined) {
        table.removeAttribute("tabindex");
        delete table.dataset.scrollFocus;
      }
    });
  }
  let resizeTimer = null;
  window.addEventListener("resize", function () {
    clearTimeout(resizeTimer);
    resizeTimer = setTimeout(markScrollingTables, 150);
  });
  document.addEventListener("DOMContentLoaded", markScrollingTables);
  document.addEventListener("htmx:afterSettle", markScrollingTables);

  const PAUSE_MS = 1200;
  let lastSaid = "";
  let pauseTimer = null;
  let lastField = null;

  function say(text) {
    const region = document.getElementById("page-status");
    if (!region || !text || text === lastSaid) return;
    lastSaid = text;
    region.textContent = text;
  }

  function textOf(root, selector) {
    const found = root && root.querySelector(selector);
    return found ? found.textContent.replace(/\s+/g, " ").trim() : "";
  }

  function scenarioStatus(field) {
    const scenario = field.closest("[data-scenario]");
    if (!scenario) return "";
    const heading = scenario.querySelector("h4");  // its first text: "Scenario 1.2.3"
    const name = (heading && heading.firstChild ? heading.firstChild.textContent.trim() : "") ||
      "Scenario";
    if (field.hasAttribute("data-unsaved")) {
      return (field.getAttribute("aria-label") || name) + ": " +
        textOf(document, "#" + CSS.escape(field.id) + "-said");
    }
    if (field.getAttribute("aria-invalid") === "true") {
      const why = textOf(document, "#" + CSS.escape(field.id) + "-said");
      return (field.getAttribute("aria-label") || name) + ": not read. " + why;
    }
    const results = document.getElementById("scenario-" + scenario.dataset.scenario + "-results");
    const error = textOf(results, "[data-figure='error']");
    if (error) return name + ": " + error;
    const mitigated = textOf(results, "[data-figure='mitigated']");
    if (!mitigated) return "";
    return name + ": mitigated " + mitigated + ", gap " + textOf(results, "[data-figure='gap']") +
      ", " + textOf(results, ".verdict .badge") + ", additional SIF " +
      textOf(results, "[data-figure='sil']") + ".";
  }

  function busy(field) {
    return field.classList.contains("htmx-request") ||
      document.querySelector(".htmx-request") !== null;
  }

  function afterPause() {
    clearTimeout(pauseTimer);
    pauseTimer = setTimeout(function () {
      if (!lastField || !lastField.isConnected) return;
      if (busy(lastField)) { afterPause(); return; }
      say(fieldStatus(lastField));
    }, PAUSE_MS);
  }

  // A value field whose state changed without typing (a busy database's answer, then the
  // saved value) says so once requests settle, like a pause in typing.
  window.TallyroomStatus = {
    changed: function (field) { lastField = field; afterPause(); }
  };

  function onEdit(event) {
    const field = event.target;
    if (!field.matches || !field.matches("input, select, textarea")) return;
    if (!field.matches("#worksheet [data-field]") && !document.querySelector("[data-status]")) return;
    lastField = field;
    afterPause();
  }

  // Outside the worksheet a page that updates as one types marks its short status in
  // data-status (the proof-test calculator's result).
  function fieldStatus(field) {
    if (field.matches("#worksheet [data-field]")) return scenarioStatus(field);
    const marked = document.querySelector("[data-status]");
    return marked ? marked.dataset.status : "";
  }
  document.addEventListener("input", onEdit);
  document.addEventListener("change", onEdit);

  function roomStatus() {
    const live = document.getElementById("room-live");
    if (!live) return "";
    const mitigated = textOf(live, "#room-mitigated");
    if (!mitigated) return textOf(live, ".room-title");
    return textOf(live, ".room-where") + ": mitigated " + mitigated + ", gap " +
      textOf(live, "#room-gap") + ", additional SIF " + textOf(live, "#room-sil") + ".";
  }

  // The room's figures follow the scribe's typing: speak once they have stood still a moment.
  let roomTimer = null;
  document.addEventListener("htmx:afterSettle", function () {
    if (!document.getElementById("room-live")) return;
    clearTimeout(roomTimer);
    roomTimer = setTimeout(function () { say(roomStatus()); }, PAUSE_MS);
  });
  document.addEventListener("DOMContentLoaded", function () {
    lastSaid = roomStatus();  // what is on screen at load is read with the page, not announced
  });
})();
