// Tallyroom actions page: what htmx attributes cannot say on their own.
// In team order, Alt+ArrowUp / Alt+ArrowDown on a row (or a link or button in it) submits that
// row's move form; the server answers with the moved row marked autofocus, so focus stays on it.
// Fields and selects keep their own Alt+arrow behaviour (a select opens its list).
(function () {
  "use strict";

  const DIRECTIONS = { ArrowUp: "up", ArrowDown: "down" };

  document.addEventListener("keydown", function (event) {
    const direction = DIRECTIONS[event.key];
    const target = event.target;
    if (!event.altKey || !direction || !target.closest) return;
    if (target.matches("input, select, textarea")) return;
    const row = target.closest("[data-action-row]");
    const form = row && row.querySelector('[data-move="' + direction + '"]');
    if (!form) return;
    event.preventDefault();
    if (!form.querySelector("button:disabled")) form.requestSubmit();
  });
})();
