/*
 * reportgen tables: sorting and filtering for report and index pages.
 * Plain JavaScript, no libraries, no network; works from file:// and over HTTP.
 * Without JavaScript every table stays complete and readable.
 *
 * Markup it acts on:
 *   <table id="loads" data-sortable> with <thead> (the last header row is used)
 *     <th>                         sortable column (a <button> is put inside it)
 *     <th data-nosort>             not sortable
 *     <th data-sort-type="number|text">  force the comparison (default: number when
 *                                  any body cell of the column carries data-value)
 *     <th data-sort-default="ascending|descending">  sorted that way on load
 *     <td data-value="59500">      value used for numeric sorting (SI number);
 *                                  cells without a number sort last either way
 *     <tr data-status="pass|warn|fail">  row status for the status filter
 *   <input data-filter-for="loads">          case-insensitive substring over the row text
 *   <select data-status-filter-for="loads">  option values: "" or "all" = every row,
 *                                  otherwise statuses separated by spaces or commas ("warn fail")
 *   <span data-count-for="loads">   filled with "N of M rows"
 *   <p data-empty-for="loads" hidden>   shown only when the filters leave no row
 *
 * Body rows are sorted within each <tbody>; cells spanning rows (rowspan) are not supported.
 * The button inside each <th> has class "sort-button"; the arrow is a
 * <span class="sort-indicator" aria-hidden="true">. The active <th> carries aria-sort.
 * The script sets no styles (so a Content-Security-Policy without 'unsafe-inline' is fine);
 * suggested page CSS:
 *   .sort-button { font: inherit; color: inherit; background: none; border: 0;
 *                  padding: 0; cursor: pointer; text-align: inherit; }
 *   .sort-button:focus-visible { outline: 2px solid currentColor; outline-offset: 2px; }
 */
(function () {
  "use strict";

  var collator = (typeof Intl !== "undefined" && Intl.Collator)
    ? new Intl.Collator(undefined, { numeric: true, sensitivity: "base" })
    : null;

  function compareText(a, b) {
    return collator ? collator.compare(a, b) : (a < b ? -1 : a > b ? 1 : 0);
  }

  function toArray(list) {
    return Array.prototype.slice.call(list || []);
  }

  function headerRow(table) {
    var head = table.tHead;
    if (head && head.rows.length) {
      return head.rows[head.rows.length - 1];
    }
    return null;
  }

  /* Cell of `row` at visual column `col`, counting colspans. */
  function cellAt(row, col) {
    var pos = 0;
    for (var i = 0; i < row.cells.length; i++) {
      var cell = row.cells[i];
      var span = cell.colSpan || 1;
      if (col < pos + span) {
        return pos === col ? cell : null;
      }
      pos += span;
    }
    return null;
  }

  function columnOf(th) {
    var pos = 0;
    var cells = th.parentNode.cells;
    for (var i = 0; i < cells.length; i++) {
      if (cells[i] === th) {
        return pos;
      }
      pos += cells[i].colSpan || 1;
    }
    return -1;
  }

  function bodyRows(table) {
    var rows = [];
    toArray(table.tBodies).forEach(function (tb) {
      rows = rows.concat(toArray(tb.rows));
    });
    return rows;
  }

  function numberOf(cell) {
    if (!cell || !cell.hasAttribute("data-value")) {
      return null;
    }
    var raw = cell.getAttribute("data-value").trim();
    if (raw === "") {
      return null;
    }
    var v = Number(raw);
    return isFinite(v) ? v : null;
  }

  function textOf(cell) {
    if (!cell) {
      return "";
    }
    return (cell.textContent || "").replace(/\s+/g, " ").trim();
  }

  function isNumericColumn(table, th, col) {
    var forced = th.getAttribute("data-sort-type");
    if (forced === "number") {
      return true;
    }
    if (forced === "text") {
      return false;
    }
    return bodyRows(table).some(function (row) {
      var cell = cellAt(row, col);
      return cell && cell.hasAttribute("data-value");
    });
  }

  function sortTable(table, th, direction) {
    var col = columnOf(th);
    if (col < 0) {
      return;
    }
    var numeric = isNumericColumn(table, th, col);
    var sign = direction === "descending" ? -1 : 1;
    toArray(table.tBodies).forEach(function (tb) {
      var rows = toArray(tb.rows).map(function (row, i) {
        if (row._rgIndex === undefined) {
          row._rgIndex = i;
        }
        var cell = cellAt(row, col);
        var key = numeric ? numberOf(cell) : textOf(cell);
        if (!numeric && key === "") {
          key = null;
        }
        return { row: row, key: key };
      });
      rows.sort(function (a, b) {
        if (a.key === null || b.key === null) {
          if (a.key === null && b.key === null) {
            return a.row._rgIndex - b.row._rgIndex;
          }
          return a.key === null ? 1 : -1; /* missing values last, both directions */
        }
        var c = numeric ? (a.key < b.key ? -1 : a.key > b.key ? 1 : 0) : compareText(a.key, b.key);
        return c !== 0 ? sign * c : a.row._rgIndex - b.row._rgIndex;
      });
      var frag = document.createDocumentFragment();
      rows.forEach(function (r) {
        frag.appendChild(r.row);
      });
      tb.appendChild(frag);
    });
    var row = th.parentNode;
    toArray(row.cells).forEach(function (other) {
      if (other !== th) {
        other.removeAttribute("aria-sort");
        var ind = other.querySelector(".sort-indicator");
        if (ind) {
          ind.textContent = "";
        }
      }
    });
    th.setAttribute("aria-sort", direction);
    var indicator = th.querySelector(".sort-indicator");
    if (indicator) {
      indicator.textContent = direction === "ascending" ? " \u25B2" : " \u25BC";
    }
  }

  function makeSortable(table) {
    if (table.getAttribute("data-sortable-ready") === "1") {
      return;
    }
    table.setAttribute("data-sortable-ready", "1");
    var row = headerRow(table);
    if (!row) {
      return;
    }
    toArray(row.cells).forEach(function (th) {
      if (th.tagName !== "TH" || th.hasAttribute("data-nosort")) {
        return;
      }
      var button = document.createElement("button");
      button.type = "button";
      button.className = "sort-button";
      while (th.firstChild) {
        button.appendChild(th.firstChild);
      }
      var indicator = document.createElement("span");
      indicator.className = "sort-indicator";
      indicator.setAttribute("aria-hidden", "true");
      button.appendChild(indicator);
      th.appendChild(button);
      button.addEventListener("click", function () {
        var next = th.getAttribute("aria-sort") === "ascending" ? "descending" : "ascending";
        sortTable(table, th, next);
      });
    });
    toArray(row.cells).forEach(function (th) {
      var d = th.getAttribute("data-sort-default");
      if (d === "ascending" || d === "descending") {
        sortTable(table, th, d);
      }
    });
  }

  function statusSet(value) {
    var v = (value || "").trim().toLowerCase();
    if (v === "" || v === "all") {
      return null;
    }
    return v.split(/[\s,]+/).filter(function (s) {
      return s !== "";
    });
  }

  function applyFilters(table) {
    var id = table.id;
    var queries = toArray(document.querySelectorAll("input[data-filter-for]")).filter(function (el) {
      return el.getAttribute("data-filter-for") === id;
    }).map(function (el) {
      return (el.value || "").replace(/\s+/g, " ").trim().toLowerCase();
    }).filter(function (q) {
      return q !== "";
    });
    var sets = toArray(document.querySelectorAll("select[data-status-filter-for]")).filter(function (el) {
      return el.getAttribute("data-status-filter-for") === id;
    }).map(function (el) {
      return statusSet(el.value);
    }).filter(function (s) {
      return s !== null;
    });
    var rows = bodyRows(table);
    var shown = 0;
    rows.forEach(function (row) {
      var text = (row.textContent || "").replace(/\s+/g, " ").toLowerCase();
      var status = (row.getAttribute("data-status") || "").toLowerCase();
      var ok = queries.every(function (q) {
        return text.indexOf(q) !== -1;
      }) && sets.every(function (s) {
        return s.indexOf(status) !== -1;
      });
      row.hidden = !ok;
      if (ok) {
        shown += 1;
      }
    });
    toArray(document.querySelectorAll("[data-count-for]")).forEach(function (el) {
      if (el.getAttribute("data-count-for") === id) {
        el.textContent = shown + " of " + rows.length + " rows";
      }
    });
    toArray(document.querySelectorAll("[data-empty-for]")).forEach(function (el) {
      if (el.getAttribute("data-empty-for") === id) {
        el.hidden = shown !== 0;
      }
    });
  }

  function bindFilter(el, attr, events) {
    if (el.getAttribute("data-filter-ready") === "1") {
      return;
    }
    var table = document.getElementById(el.getAttribute(attr) || "");
    if (!table || table.tagName !== "TABLE") {
      return; /* nothing to filter: leave the control alone */
    }
    el.setAttribute("data-filter-ready", "1");
    events.forEach(function (ev) {
      el.addEventListener(ev, function () {
        applyFilters(table);
      });
    });
    applyFilters(table); /* the browser may have restored a value */
  }

  function init(root) {
    var scope = root || document;
    toArray(scope.querySelectorAll("table[data-sortable]")).forEach(makeSortable);
    toArray(scope.querySelectorAll("input[data-filter-for]")).forEach(function (el) {
      bindFilter(el, "data-filter-for", ["input", "change", "search"]);
    });
    toArray(scope.querySelectorAll("select[data-status-filter-for]")).forEach(function (el) {
      bindFilter(el, "data-status-filter-for", ["change", "input"]);
    });
  }

  window.reportgenTables = { init: init, sort: sortTable, filter: applyFilters };

  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", function () {
      init(document);
    });
  } else {
    init(document);
  }
})();
