// Tallyroom room view: fit the projector's screen without scrolling.
// The room section of room.css sizes everything from the window's height and clamps the long
// texts. A scenario with many steps or long extra lines can still need more room; then, in
// this order, until nothing overflows:
//   1. step descriptions take one line instead of two (body.room-compact);
//   2. the page's type scale (--room-scale on <body>) steps down to a floor (0.82: type a
//      room can still read; pages of steps are easier on it than smaller type);
//   3. the step table pages: as many rows as fit, a button says which and turns the page
//      (it turns on its own every PAGE_SECONDS too);
//   4. the scale goes on down to the last floor, paging again at each size.
(function () {
  "use strict";

  const FIRST_SCALES = [1, 0.94, 0.88, 0.82];
  const LAST_SCALES = [0.76, 0.7, 0.64];
  const FEWEST_ROWS = 3;
  const PAGE_SECONDS = 10;
  let pageSize = 0;
  let pageIndex = 0;
  let turner = null;

  function overflows() {
    const root = document.documentElement;
    const main = document.getElementById("main");
    return root.scrollHeight > window.innerHeight || root.scrollWidth > window.innerWidth
      || (main !== null && main.scrollHeight > main.clientHeight + 1);
  }

  function stepRows() {
    return Array.from(document.querySelectorAll("#room-steps tbody tr"));
  }

  function setScale(scale) {
    document.body.style.setProperty("--room-scale", String(scale));
  }

  function showPage() {
    const rows = stepRows();
    const pager = document.getElementById("room-pager");
    if (pager === null) return;
    const pages = pageSize > 0 ? Math.ceil(rows.length / pageSize) : 1;
    if (pages <= 1) {
      rows.forEach(function (row) { row.hidden = false; });
      pager.hidden = true;
      return;
    }
    pageIndex = pageIndex % pages;
    const first = pageIndex * pageSize;
    const last = Math.min(first + pageSize, rows.length);
    rows.forEach(function (row, index) { row.hidden = index < first || index >= last; });
    pager.hidden = false;
    pager.textContent = "Steps " + (first + 1) + "–" + last + " of " + rows.length
      + " · page " + (pageIndex + 1) + " of " + pages + " · next ▸";
  }

  // The most rows that fit at the present size (FEWEST_ROWS at least): the page size.
  function pageToFit() {
    const rows = stepRows();
    pageSize = rows.length;
    showPage();
    while (overflows() && pageSize > FEWEST_ROWS) {
      pageSize -= 1;
      showPage();
    }
    return !overflows();
  }

  function tryScales(scales) {
    for (const scale of scales) {
      setScale(scale);
      if (!overflows()) return true;
    }
    return false;
  }

  // Start from the full size each time (a change may need less room than the last one); one
  // task sets and measures, so the browser paints only the final state.
  function fit() {
    const body = document.body;
    pageSize = 0;
    showPage();
    body.classList.remove("room-compact");
    setScale(1);
    let fitted = !overflows();
    if (!fitted) {
      body.classList.add("room-compact");
      fitted = tryScales(FIRST_SCALES) || pageToFit();
      for (const scale of LAST_SCALES) {
        if (fitted) break;
        setScale(scale);
        fitted = pageToFit();
      }
    }
    body.dataset.roomFitted = "yes";
    window.clearInterval(turner);
    turner = pageSize > 0 && pageSize < stepRows().length
      ? window.setInterval(turnPage, PAGE_SECONDS * 1000) : null;
  }

  function turnPage() {
    pageIndex += 1;
    showPage();
  }

  let pending = false;
  function fitSoon() {
    if (pending) return;
    pending = true;
    window.requestAnimationFrame(function () { pending = false; fit(); });
  }

  fit();
  if (document.fonts && document.fonts.ready) document.fonts.ready.then(fit);
  window.addEventListener("resize", fitSoon);
  document.body.addEventListener("htmx:afterSettle", function () { pageIndex = 0; fitSoon(); });
  // Hover or focus shows a clamped text whole; leaving it puts the clamp back.
  document.body.addEventListener("focusout", fitSoon);
  document.body.addEventListener("click", function (event) {
    if (event.target.closest && event.target.closest("#room-pager")) turnPage();
  });
})();
