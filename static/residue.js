// Residue: small progressive enhancements; every page works without this file.
// 1. Empty fields are left out of the submitted address, so shared links stay short.
// 2. Every year of a schedule is unfolded before printing, and folded back after.
(function () {
  "use strict";
  document.addEventListener("submit", function (event) {
    var form = event.target;
    if (!form || form.method.toLowerCase() !== "get") return;
    Array.prototype.forEach.call(form.elements, function (el) {
      if (el.name && el.value === "") el.disabled = true;
    });
    window.setTimeout(function () {
      Array.prototype.forEach.call(form.elements, function (el) { el.disabled = false; });
    }, 0);
  });
  var reopened = [];
  window.addEventListener("beforeprint", function () {
    reopened = [];
    document.querySelectorAll("details.year:not([open])").forEach(function (d) {
      d.open = true;
      reopened.push(d);
    });
  });
  window.addEventListener("afterprint", function () {
    reopened.forEach(function (d) { d.open = false; });
    reopened = [];
  });
})();
