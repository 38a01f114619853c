// Estimate rounds (the facilitator's round page): Alt+R runs another round on the same step.
(function () {
  "use strict";
  document.addEventListener("keydown", function (event) {
    if (!event.altKey || event.key.toLowerCase() !== "r") return;
    const next = document.querySelector("[data-next-round]");
    if (!next) return;
    event.preventDefault();
    next.click();
  });
})();
