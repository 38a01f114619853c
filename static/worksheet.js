// Tallyroom worksheet: what htmx attributes cannot say on their own.
// - a sequence number per value field, so a reply older than the newest text is never shown
//   (the server keeps the same order in the database: services/study/conflicts.py);
// - a value the database was too busy to take (503) is sent again after Retry-After;
// - "keep mine" / "take theirs" put the chosen value in the field after a conflict;
// - keyboard: Enter to the next field (after a kind's last row: its add button, which adds
//   only with its own Enter), Escape to cancel, Alt+arrows to move, Alt+Delete to delete
//   (asks first), Alt+Z to undo, Alt+N to add an IPL, Alt+R for an estimate round,
//   ? for help; Alt shortcuts match the
//   physical key (event.code), so Option on macOS, which changes the character, works;
// - tell the server which scenario the scribe is on, for the room view;
// - on a large node, keep the scenarios opened in full across redraws.
(function () {
  "use strict";

  const client = Math.random().toString(36).slice(2) + Date.now().toString(36);

  function nextSeq(field) {
    const seq = Number(field.dataset.seq || "0") + 1;
    field.dataset.seq = String(seq);
    return seq;
  }

  window.Tallyroom = { client: client, nextSeq: nextSeq };

  // The client id and sequence number go with each value edit (no hx-vals "js:": the
  // Content-Security-Policy allows no eval).
  document.addEventListener("htmx:configRequest", function (event) {
    const field = event.detail.elt;
    if (!field || !field.matches || !field.matches("[data-value-field]")) return;
    event.detail.parameters.client = client;
    event.detail.parameters.seq = nextSeq(field);
  });

  // A redraw of a large node keeps the scenarios this page has open in full (the server draws
  // the others as slim lines).
  document.addEventListener("htmx:configRequest", function (event) {
    const sheet = document.getElementById("worksheet");
    if (!sheet || !sheet.hasAttribute("data-paged")) return;
    if (event.detail.elt.getAttribute("hx-target") !== "#worksheet") return;
    const open = Array.from(sheet.querySelectorAll("article.scenario:not(.slim)"))
      .map(function (article) { return article.dataset.scenario; });
    if (open.length) event.detail.headers["X-Tallyroom-Open"] = open.slice(-5).join(",");
  });

  // A large node's remaining rows: each part is asked for once, as soon as its line is in or
  // above the view (a quick scroll that jumps past a line still brings its rows; rows added
  // above the view do not move what the scribe is looking at, the browser anchors the scroll).
  function askForRows() {
    document.querySelectorAll("[data-more-rows]:not([data-asked])").forEach(function (line) {
      if (line.getBoundingClientRect().top > window.innerHeight + 400) return;
      line.setAttribute("data-asked", "");
      line.dispatchEvent(new CustomEvent("tallyroom:more"));
    });
  }
  let rowsFrame = 0;
  function askForRowsSoon() {
    if (!rowsFrame) rowsFrame = requestAnimationFrame(function () { rowsFrame = 0; askForRows(); });
  }
  window.addEventListener("scroll", askForRowsSoon, { passive: true });
  document.addEventListener("htmx:afterSettle", askForRowsSoon);
  document.addEventListener("DOMContentLoaded", askForRowsSoon);

  // A scenario's figures carry the state they were computed from (data-state grows with every
  // save). The target was found when the request left; another reply may have replaced it
  // since, and a swap into that detached element would be lost, so aim at the one now on the
  // page; and drop a reply computed from an older state than the one shown, so a slow reply
  // never brings back old figures. (htmx reads the target before this event and fires
  // beforeSwap on the old one, so this is the event that sees every such reply.)
  document.addEventListener("htmx:beforeOnLoad", function (event) {
    const target = event.detail.target;
    if (!target || !target.matches || !target.matches(".scenario-results[data-state]")) return;
    const live = target.isConnected ? target : document.getElementById(target.id);
    if (!live) return;
    event.detail.target = live;
    const found = /data-state="(\d+)"/.exec(event.detail.xhr.response || "");
    if (found && Number(found[1]) < Number(live.dataset.state)) event.preventDefault();
  });

  // A reply carries the sequence number it answers; drop it if the field has moved on.
  document.addEventListener("htmx:beforeSwap", function (event) {
    const field = event.detail.requestConfig && event.detail.requestConfig.elt;
    const answered = event.detail.xhr.getResponseHeader("X-Tallyroom-Seq");
    if (!field || !answered || !field.dataset.seq) return;
    if (Number(answered) < Number(field.dataset.seq)) {
      event.detail.shouldSwap = false;
      event.detail.ignoreTitle = true;
    }
  });

  document.addEventListener("htmx:afterRequest", function (event) {
    const field = event.detail.elt;
    if (!field || !field.matches || !field.matches("[data-value-field]")) return;
    const answered = event.detail.xhr.getResponseHeader("X-Tallyroom-Seq");
    if (answered && Number(answered) < Number(field.dataset.seq || "0")) return;
    if (event.detail.xhr.status === 422) field.setAttribute("aria-invalid", "true");
    else if (event.detail.xhr.status === 200) field.removeAttribute("aria-invalid");
    if (event.detail.xhr.status !== 503 && field.hasAttribute("data-unsaved")) {
      field.removeAttribute("data-unsaved");
      if (window.TallyroomStatus) window.TallyroomStatus.changed(field);
    }
  });

  // A value the database was too busy to take (503: another large write, such as an import,
  // held it past the server's wait; nothing was saved): the field's line says so, and the
  // value is sent again after the answer's Retry-After, while the field is on the page (the
  // newest text then: typing in between sends its own).
  document.addEventListener("htmx:responseError", function (event) {
    const field = event.detail.elt;
    const xhr = event.detail.xhr;
    if (xhr.status !== 503 || !field.matches || !field.matches("[data-value-field]")) return;
    const wait = Number(xhr.getResponseHeader("Retry-After")) || 2;
    const said = document.getElementById(field.id + "-said");
    if (said) {
      // Short, in the narrow value column; the server's whole sentence is the line's title.
      said.textContent = "Not saved: the database is busy. Sending again in " + wait + " s.";
      said.title = window.TallyroomErrors.sentence(xhr);
      said.classList.add("field-error");
    }
    field.setAttribute("data-unsaved", "");
    if (window.TallyroomStatus) window.TallyroomStatus.changed(field);
    setTimeout(function () {
      if (field.isConnected) field.dispatchEvent(new Event("change", { bubbles: true }));
    }, wait * 1000);
  });

  // "Keep mine" / "Take theirs" after a conflict (409): the field shows the chosen value; the
  // button's form saves (keep) or only logs (take) the choice.
  document.addEventListener("click", function (event) {
    const button = event.target.closest && event.target.closest("[data-resolve]");
    if (!button) return;
    const field = document.getElementById(button.dataset.for);
    if (!field) return;
    field.value = button.dataset.value;
    field.dataset.before = field.value;
  });

  // --- focus: remember the text on entry (for Escape) and follow the scenario (for the room)
  let focusTimer = null;
  let lastScenario = null;

  function reportFocus(scenarioId) {
    const sheet = document.getElementById("worksheet");
    if (!sheet || scenarioId === lastScenario) return;
    lastScenario = scenarioId;
    clearTimeout(focusTimer);
    focusTimer = setTimeout(function () {
      const body = new URLSearchParams({ scenario_id: scenarioId });
      const headers = {};
      headers[TallyroomCsrf.header] = TallyroomCsrf.token();
      fetch("/studies/" + sheet.dataset.study + "/focus",
            { method: "POST", body: body, headers: headers });
    }, 100);
  }

  document.addEventListener("focusin", function (event) {
    const field = event.target;
    if (field.matches && field.matches("[data-field]")) field.dataset.before = field.value;
    const scenario = field.closest && field.closest("[data-scenario]");
    if (scenario) reportFocus(scenario.dataset.scenario);
  });

  // --- keyboard
  function rowOf(element) {
    return element.closest("[data-row]");
  }

  function ownFields(row) {
    return Array.from(row.querySelectorAll("[data-field]")).filter(function (f) {
      return rowOf(f) === row;
    });
  }

  function ownControls(row) {
    return row.querySelector('[data-controls="' + row.dataset.row + "-" + row.dataset.rowId + '"]');
  }

  // On a large node the next scenario may be a slim line: its link takes the focus (Enter
  // on it opens the scenario in full).
  function focusNextField(field) {
    const all = Array.from(document.querySelectorAll(
      "#worksheet [data-field], #worksheet [data-open-scenario]"));
    const next = all[all.indexOf(field) + 1];
    if (next) next.focus();
  }

  function onEnter(event, field) {
    if (field.tagName === "SELECT") return;
    event.preventDefault();
    const row = rowOf(field);
    const fields = row ? ownFields(row) : [];
    const isLast = fields.indexOf(field) === fields.length - 1;
    const addNext = row && Array.from(row.querySelectorAll("[data-add-next]"))
      .find(function (form) { return rowOf(form) === row; });
    const nextRow = row && row.nextElementSibling;
    if (!(isLast && addNext) || (nextRow && nextRow.matches("[data-row]"))) {
      focusNextField(field);  // leaving the field saves it (its change event)
      return;
    }
    // The last field of the last row: never add a row from a key meant for the text. Focus
    // goes to the labelled add button of this kind, which adds only with its own Enter.
    const scenario = field.closest("[data-scenario]");
    const add = scenario && scenario.querySelector(
      '[data-add="' + row.dataset.kind + '"] button');
    if (add) add.focus();
  }

  // An add button takes Enter pressed on it, not Space and not a held-down Enter: a space or
  // a repeated Enter typed just after leaving a field never adds a blank row.
  function guardAddButton(event) {
    const button = event.target;
    if (!button.matches || !button.matches("[data-add] button, [data-add-next] button")) return;
    if (event.key === " " || (event.key === "Enter" && event.repeat)) event.preventDefault();
  }
  document.addEventListener("keydown", guardAddButton, true);
  document.addEventListener("keyup", guardAddButton, true);

  function onEscape(event, field) {
    if (field.dataset.before === undefined || field.value === field.dataset.before) return;
    event.preventDefault();
    field.value = field.dataset.before;
    if (field.matches("[data-value-field]")) {
      field.dispatchEvent(new Event("input", { bubbles: true }));
    }
  }

  function onMove(event, field, offset) {
    const row = rowOf(field);
    const controls = row && ownControls(row);
    const form = controls && controls.querySelector('[data-move="' + offset + '"]');
    if (!form) return;
    event.preventDefault();
    form.querySelector('[name="focus"]').value = field.id;
    form.requestSubmit();
  }

  function onDelete(event, field) {
    const row = rowOf(field);
    const controls = row && ownControls(row);
    const link = controls && controls.querySelector("[data-delete]");
    if (!link) return;
    event.preventDefault();
    link.click();
  }

  function onOpenRound(event, field) {
    // Alt+R in a value field: open an estimate round on that value (the row's "ask the room").
    const cell = field.closest(".value-cell");
    const link = cell && cell.querySelector("[data-open-round]");
    if (!link) return;
    event.preventDefault();
    window.location.href = link.href;
  }

  function onAddIpl(event, field) {
    const scenario = field.closest("[data-scenario]");
    const form = scenario && scenario.querySelector('[data-add="ipl"]');
    if (!form) return;
    event.preventDefault();
    form.requestSubmit();
  }

  document.addEventListener("keydown", function (event) {
    const target = event.target;
    const inField = target.matches && target.matches("[data-field]");
    if (event.altKey && event.code === "KeyZ") {
      const undo = document.getElementById("undo-button");
      if (undo) { event.preventDefault(); undo.click(); }
      return;
    }
    if (!inField) {
      const typing = target.matches && target.matches("input, textarea, select");
      if (event.key === "?" && !typing) {
        const help = document.getElementById("keys-help");
        if (help) window.location.href = help.href;
      }
      return;
    }
    if (event.altKey && event.key === "ArrowUp") onMove(event, target, -1);
    else if (event.altKey && event.key === "ArrowDown") onMove(event, target, 1);
    else if (event.altKey && (event.key === "Delete" || event.key === "Backspace")) onDelete(event, target);
    else if (event.altKey && event.code === "KeyN") onAddIpl(event, target);
    else if (event.altKey && event.code === "KeyR") onOpenRound(event, target);
    else if (event.key === "Enter" && !event.altKey && !event.shiftKey) onEnter(event, target);
    else if (event.key === "Escape") onEscape(event, target);
  });

  // A typed value is saved before any request that redraws the worksheet (add, move, delete,
  // undo): leaving the field sends it at once (hx-trigger "change"), and a redraw asked for
  // while a value is still on its way waits for it (at most two seconds), so the redraw never
  // drops the value nor shows the old one.
  var valuesInFlight = 0;
  function isValueField(elt) { return elt && elt.matches && elt.matches("[data-value-field]"); }
  document.addEventListener("htmx:beforeRequest", function (event) {
    if (isValueField(event.detail.elt)) valuesInFlight += 1;
  });
  document.addEventListener("htmx:afterRequest", function (event) {
    if (isValueField(event.detail.elt)) valuesInFlight = Math.max(0, valuesInFlight - 1);
  });
  document.addEventListener("htmx:confirm", function (event) {
    var elt = event.detail.elt;
    if (valuesInFlight === 0 || isValueField(elt)) return;
    if (!elt.closest || !elt.closest("#worksheet") || elt.getAttribute("hx-target") !== "#worksheet") return;
    event.preventDefault();
    var started = Date.now();
    (function issueWhenSettled() {
      if (valuesInFlight === 0 || Date.now() - started > 2000) event.detail.issueRequest(true);
      else setTimeout(issueWhenSettled, 25);
    })();
  });
})();
