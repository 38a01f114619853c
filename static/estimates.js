// Estimate rounds (the facilitator's round page): Alt+R runs another round on the same step.
// The physical key (event.code), so Option+R on macOS, which types "®", works too.
(function () {
  "use strict";
  document.addEventListener("keydown", function (event) {
    if (!event.altKey || event.code !== "KeyR") return;
    const next = document.querySelector("[data-next-round]");
    if (!next) return;
    event.preventDefault();
    next.click();
  });
})();
