// Residue: small progressive enhancements; every page works without this file.
// 1. Empty fields are left out of the submitted address, so shared links stay short;
//    a row of repeatable fields is left out whole when blank, and kept whole
//    otherwise (its fields are read by position).
// 2. Every year of a schedule is unfolded before printing, and folded back after.
// 3. The pipeline page posts its file to the API and shows the verdicts as they
//    stream in, with a progress bar; without this, its form posts to the page.
// 4. The payment grid marks the column under the pointer.
// 5. Repeatable rows get an "Add a row" button and a "Remove" button on each row.
(function () {
  "use strict";
  // 5. Repeatable rows: add and remove; without this the form shows blank rows.
  var relabel = function (table) {
    Array.prototype.forEach.call(table.tBodies[0].rows, function (tr, i) {
      tr.querySelectorAll("input").forEach(function (input) {
        var label = input.getAttribute("aria-label") || "";
        input.setAttribute("aria-label", label.replace(/, row \d+$/, ", row " + (i + 1)));
      });
      var b = tr.querySelector("button.remove-row");
      if (b) b.setAttribute("aria-label", "Remove row " + (i + 1));
    });
  };
  var removable = function (table, tr) {
    var td = document.createElement("td");
    var b = document.createElement("button");
    b.type = "button";
    b.className = "remove-row";
    b.textContent = "Remove";
    b.addEventListener("click", function () {
      var body = table.tBodies[0];
      if (body.rows.length > 1) {
        tr.parentNode.removeChild(tr);
      } else {
        tr.querySelectorAll("input").forEach(function (i) { i.value = ""; });
      }
      relabel(table);
    });
    td.appendChild(b);
    tr.appendChild(td);
  };
  document.querySelectorAll("table[data-repeatable]").forEach(function (table) {
    var th = document.createElement("th");
    th.scope = "col";
    th.innerHTML = '<span class="visually-hidden">Remove</span>';
    table.tHead.rows[0].appendChild(th);
    Array.prototype.forEach.call(table.tBodies[0].rows, function (tr) { removable(table, tr); });
    var add = document.createElement("button");
    add.type = "button";
    add.className = "add-row";
    add.textContent = "Add a row";
    add.addEventListener("click", function () {
      var body = table.tBodies[0];
      var last = body.rows[body.rows.length - 1];
      var tr = last.cloneNode(true);
      tr.querySelectorAll("input").forEach(function (i) { i.value = ""; });
      var old = tr.querySelector("td:last-child");
      if (old && old.querySelector("button")) tr.removeChild(old);
      body.appendChild(tr);
      removable(table, tr);
      relabel(table);
      var first = tr.querySelector("input");
      if (first) first.focus();
    });
    var wrap = table.closest(".table-wrap") || table;
    wrap.parentNode.insertBefore(add, wrap.nextSibling);
  });
  document.addEventListener("submit", function (event) {
    var form = event.target;
    if (!form || form.method.toLowerCase() !== "get") return;
    Array.prototype.forEach.call(form.elements, function (el) {
      var row = el.closest && el.closest("table[data-repeatable] tr");
      if (row) {
        var blank = Array.prototype.every.call(row.querySelectorAll("input"), function (i) { return i.value.trim() === ""; });
        if (blank) el.disabled = true;
        return;
      }
      if (el.name && el.value === "") el.disabled = true;
    });
    window.setTimeout(function () {
      Array.prototype.forEach.call(form.elements, function (el) { el.disabled = false; });
    }, 0);
  });
  // 4. The payment grid marks the column under the pointer as CSS marks the row.
  document.querySelectorAll(".payment-grid").forEach(function (table) {
    var mark = function (col, on) {
      table.querySelectorAll('td[data-col="' + col + '"]').forEach(function (td) { td.classList.toggle("hover-col", on); });
    };
    table.addEventListener("mouseover", function (e) { var td = e.target.closest("td[data-col]"); if (td) mark(td.dataset.col, true); });
    table.addEventListener("mouseout", function (e) { var td = e.target.closest("td[data-col]"); if (td) mark(td.dataset.col, false); });
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

  var form = document.getElementById("pipeline-form");
  if (form && window.fetch && window.TextDecoder && window.ReadableStream) {
    var SHOWN_OK = 500;
    var live = document.getElementById("pipeline-live");
    var bar = document.getElementById("pipeline-progress");
    var count = document.getElementById("pipeline-count");
    var result = document.getElementById("pipeline-result");
    var cell = function (tr, text) {
      var td = document.createElement("td");
      td.textContent = text == null ? "" : text;
      tr.appendChild(td);
      return td;
    };
    var pair = function (a, b) { return (a || "") + (b ? " / " + b : ""); };
    var row = function (v) {
      var tr = document.createElement("tr");
      tr.className = v.status;
      cell(tr, v.id); cell(tr, v.line); cell(tr, v.status);
      cell(tr, pair(v.computed_payment, v.quoted_payment));
      cell(tr, pair(v.apr_percent, v.quoted_apr_percent));
      cell(tr, v.reason);
      var td = cell(tr, "");
      if (v.check_url) {
        var a = document.createElement("a");
        a.href = v.check_url; a.textContent = "open";
        td.appendChild(a);
      }
      return tr;
    };
    var body = function () {
      var file = document.getElementById("pipeline-file").files[0];
      if (file) return file;
      var text = document.getElementById("pipeline-rows").value;
      return text.trim() ? new Blob([text], { type: "text/csv" }) : null;
    };
    var show = function (html) {
      result.hidden = false;
      result.innerHTML = "";
      result.appendChild(html);
    };
    var arrived = false;
    var problem = function (p) {
      var box = document.createElement("div");
      box.className = "problem";
      box.setAttribute("role", "alert");
      live.hidden = true;
      var h = document.createElement("h2");
      h.id = "result-title";
      h.textContent = "The file was not checked";
      var d = document.createElement("p");
      d.textContent = p.detail || "The file could not be checked.";
      box.appendChild(h); box.appendChild(d);
      if (p.errors && p.errors.length) {
        var ul = document.createElement("ul");
        p.errors.forEach(function (e) {
          var li = document.createElement("li");
          li.textContent = e.pointer + ": " + e.message;
          ul.appendChild(li);
        });
        box.appendChild(ul);
      }
      show(box);
    };
    form.addEventListener("submit", function (event) {
      if (event.submitter && event.submitter.getAttribute("formaction")) return;
      var file = body();
      if (!file) return; // the page itself names the missing file
      event.preventDefault();
      var failing = [], holding = [], counts = { ok: 0, differs: 0, error: 0 }, seen = 0;
      arrived = false;
      live.hidden = false;
      bar.value = 0;
      count.textContent = "";
      var frag = document.createElement("div");
      var summary = document.createElement("dl");
      summary.className = "summary";
      summary.id = "pipeline-summary";
      var table = document.createElement("table");
      table.className = "verdicts";
      table.id = "pipeline-table";
      table.innerHTML = "<caption>Differing rows first, then rows not read, then rows that hold</caption><thead><tr><th scope=\"col\">Id</th><th scope=\"col\">Line</th><th scope=\"col\">Verdict</th><th scope=\"col\">Payment (computed / quoted)</th><th scope=\"col\">APR % (computed / quoted)</th><th scope=\"col\">Reason</th><th scope=\"col\">Check</th></tr></thead>";
      var tbody = document.createElement("tbody");
      table.appendChild(tbody);
      var wrap = document.createElement("div");
      wrap.className = "table-wrap";
      wrap.appendChild(table);
      var h2 = document.createElement("h2");
      h2.id = "result-title";
      h2.textContent = "The verdicts";
      frag.appendChild(h2); frag.appendChild(summary); frag.appendChild(wrap);
      var fillSummary = function () {
        summary.innerHTML = "";
        [["Rows read", "rows", seen], ["Quotes that hold", "ok", counts.ok],
         ["Quotes that differ", "differs", counts.differs], ["Rows not read", "error", counts.error]]
          .forEach(function (x) {
            var div = document.createElement("div");
            var dt = document.createElement("dt"); dt.textContent = x[0];
            var dd = document.createElement("dd"); dd.textContent = String(x[2]);
            dd.setAttribute("data-count", x[1]);
            div.appendChild(dt); div.appendChild(dd); summary.appendChild(div);
          });
      };
      var take = function (v) {
        if (v.line == null) { failing.push(v); counts.error += 1; return; }
        seen += 1;
        counts[v.status] = (counts[v.status] || 0) + 1;
        if (v.status === "ok") {
          if (holding.length < SHOWN_OK) holding.push(v);
        } else {
          failing.push(v);
          tbody.appendChild(row(v)); // failures show as soon as they arrive
        }
      };
      show(frag);
      fetch("/api/v1/loans/checks", {
        method: "POST",
        headers: { "content-type": "text/csv", "accept": "application/x-ndjson" },
        body: file
      }).then(function (response) {
        arrived = true;
        if (!response.ok) {
          return response.json().then(problem, function () {
            problem({ detail: "The server answered " + response.status + "." });
          });
        }
        var total = Number(response.headers.get("residue-rows")) || 0;
        bar.max = Math.max(total, 1);
        var reader = response.body.getReader();
        var decoder = new TextDecoder();
        var pending = "";
        var step = function () {
          return reader.read().then(function (chunk) {
            if (chunk.done) {
              if (pending.trim()) take(JSON.parse(pending));
              tbody.innerHTML = "";
              failing.sort(function (a, b) {
                var order = { differs: 0, error: 1 };
                return (order[a.status] - order[b.status]) || ((a.line || 0) - (b.line || 0));
              });
              failing.concat(holding).forEach(function (v) { tbody.appendChild(row(v)); });
              if (counts.ok > holding.length) {
                table.querySelector("caption").textContent += " (the first " + holding.length + " that hold; the download has all " + seen + ")";
              }
              fillSummary();
              bar.value = bar.max;
              count.textContent = seen + " of " + total + " rows: done";
              return;
            }
            pending += decoder.decode(chunk.value, { stream: true });
            var lines = pending.split("\n");
            pending = lines.pop();
            lines.forEach(function (l) { if (l.trim()) take(JSON.parse(l)); });
            bar.value = seen;
            count.textContent = seen + " of " + total + " rows";
            fillSummary();
            return step();
          });
        };
        return step();
      }).catch(function () {
        problem({ detail: arrived
          ? "The connection broke off after " + seen + " rows; check the rows after them again."
          : "The file could not be sent to the server; check the connection and try again." });
      });
    });
  }
})();
