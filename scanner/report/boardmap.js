// nearfar report: the interactive board map. Plain script, no libraries, nothing fetched.
// Pan: drag or arrow keys. Zoom: wheel, + and -, or the buttons. 0 or Home: whole board. Esc: clear.
(function () {
  "use strict";
  var root = document.getElementById("board-map");
  var svg = document.getElementById("map-svg");
  var dataNode = document.getElementById("map-data");
  if (!root || !svg || !dataNode) { return; }
  var data = JSON.parse(dataNode.textContent);
  var home = data.view.slice();
  var view = home.slice();
  var info = document.getElementById("map-info");
  var selected = null;

  function mmPerPixel() {
    var w = svg.clientWidth || 1, h = svg.clientHeight || 1;
    return Math.max(view[2] / w, view[3] / h);
  }

  function show() {
    svg.setAttribute("viewBox", view.join(" "));
    svg.style.setProperty("--u", String(mmPerPixel()));
  }

  function zoom(factor, cx, cy) {
    var w = Math.min(Math.max(view[2] * factor, home[2] / 2000), home[2] * 4);
    var f = w / view[2];
    if (cx === undefined) { cx = view[0] + view[2] / 2; cy = view[1] + view[3] / 2; }
    view = [cx - (cx - view[0]) * f, cy - (cy - view[1]) * f, view[2] * f, view[3] * f];
    show();
  }

  function pan(dx, dy) { view[0] += dx; view[1] += dy; show(); }

  function toUser(event) {
    var point = svg.createSVGPoint();
    point.x = event.clientX; point.y = event.clientY;
    return point.matrixTransform(svg.getScreenCTM().inverse());
  }

  function centreOn(x, y, width) {
    var w = Math.min(view[2], width), h = view[3] * w / view[2];
    view = [x - w / 2, -y - h / 2, w, h];
    show();
  }

  function element(tag, text, cls) {
    var node = document.createElement(tag);
    if (text !== undefined && text !== null) { node.textContent = text; }
    if (cls) { node.className = cls; }
    return node;
  }

  function mv(value) { return (Math.round(value * 10) / 10).toString() + " mV"; }

  function describe(entry) {
    info.textContent = "";
    var head = element("p", null, "map-info-head");
    head.appendChild(element("span", entry.status, "badge st-" + entry.status));
    head.appendChild(document.createTextNode(" on " + entry.layer_names.join(" and ")));
    info.appendChild(head);
    entry.items.forEach(function (it) {
      var block = element("div", null, "map-item");
      block.appendChild(element("h4", (/^G/.test(it.label) ? it.label : "#" + it.label) + "  " + it.victim +
        " (victim) \u2190 " + it.aggressor));
      var lines = [it.classes + ", " + it.layers + (it.structure ? " (" + it.structure + ")" : "")];
      if (it.limit) {
        lines.push(it.limit);
      } else {
        lines.push(it.length_mm + " mm side by side, gap \u2265 " + it.gap_mm + " mm");
        lines.push("NEXT " + mv(it.next_mv) + " (budget " + mv(it.next_budget_mv) + "), FEXT " + mv(it.fext_mv) +
          " (budget " + mv(it.fext_budget_mv) + ")");
        lines.push(it.used_pct + " % of budget");
      }
      lines.forEach(function (line) { block.appendChild(element("p", line)); });
      if (it.fix && it.fix.length) {
        block.appendChild(element("p", "Fix:", "map-fix-head"));
        var list = element("ul");
        it.fix.forEach(function (line) { list.appendChild(element("li", line)); });
        block.appendChild(list);
      }
      if (it.detail) {
        var link = element("a", "close-up and plots");
        link.href = "#" + it.detail;
        block.appendChild(link);
      }
      info.appendChild(block);
    });
  }

  function select(run, move) {
    var entry = data.runs[run];
    if (!entry) { return; }
    Array.prototype.forEach.call(document.querySelectorAll(".sel, .picked"), function (node) {
      node.classList.remove("sel"); node.classList.remove("picked");
    });
    Array.prototype.forEach.call(svg.querySelectorAll('[data-run="' + run + '"]'), function (node) {
      node.classList.add("sel");
    });
    Array.prototype.forEach.call(document.querySelectorAll('tr[data-run="' + run + '"]'), function (node) {
      node.classList.add("picked");
    });
    var mark = svg.querySelector('.mark[data-run="' + run + '"]');
    if (mark) { mark.parentNode.appendChild(mark); }
    selected = run;
    root.setAttribute("data-selected", run);
    describe(entry);
    if (move) { centreOn(entry.x, entry.y, home[2] / 3); }
  }

  function clear() {
    Array.prototype.forEach.call(document.querySelectorAll(".sel, .picked"), function (node) {
      node.classList.remove("sel"); node.classList.remove("picked");
    });
    selected = null;
    root.removeAttribute("data-selected");
    info.textContent = "";
    info.appendChild(element("p", "Click a marker, or a row in the tables, to see its figures and its fix.",
      "muted"));
  }

  var drag = null;
  svg.addEventListener("pointerdown", function (event) {
    if (event.target.closest && event.target.closest(".mark")) { return; }
    drag = {x: event.clientX, y: event.clientY, moved: false};
    svg.setPointerCapture(event.pointerId);
  });
  svg.addEventListener("pointermove", function (event) {
    if (!drag) { return; }
    var u = mmPerPixel();
    var dx = event.clientX - drag.x, dy = event.clientY - drag.y;
    if (Math.abs(dx) + Math.abs(dy) > 2) { drag.moved = true; }
    drag.x = event.clientX; drag.y = event.clientY;
    pan(-dx * u, -dy * u);
  });
  svg.addEventListener("pointerup", function () { drag = null; });
  svg.addEventListener("wheel", function (event) {
    event.preventDefault();
    var p = toUser(event);
    zoom(Math.exp(event.deltaY * 0.0015), p.x, p.y);
  }, {passive: false});
  svg.addEventListener("click", function (event) {
    var mark = event.target.closest ? event.target.closest(".mark") : null;
    if (mark) { select(mark.getAttribute("data-run"), false); }
  });
  svg.addEventListener("keydown", function (event) {
    var step = 0.1;
    var keys = {
      ArrowLeft: function () { pan(-view[2] * step, 0); }, ArrowRight: function () { pan(view[2] * step, 0); },
      ArrowUp: function () { pan(0, -view[3] * step); }, ArrowDown: function () { pan(0, view[3] * step); },
      "+": function () { zoom(0.8); }, "=": function () { zoom(0.8); }, "-": function () { zoom(1.25); },
      "0": function () { view = home.slice(); show(); }, Home: function () { view = home.slice(); show(); },
      Escape: clear
    };
    if (keys[event.key]) { event.preventDefault(); keys[event.key](); }
  });

  function button(id, action) {
    var node = document.getElementById(id);
    if (node) { node.addEventListener("click", action); }
  }
  button("map-zoom-in", function () { zoom(0.8); });
  button("map-zoom-out", function () { zoom(1.25); });
  button("map-home", function () { view = home.slice(); show(); });

  function applyLayers() {
    var hidden = {};
    Array.prototype.forEach.call(root.querySelectorAll("input[data-layer]"), function (box) {
      var group = svg.querySelector('g.layer[data-layer="' + box.getAttribute("data-layer") + '"]');
      if (group) { group.style.display = box.checked ? "" : "none"; }
      if (!box.checked) { hidden[box.getAttribute("data-layer")] = true; }
    });
    Array.prototype.forEach.call(svg.querySelectorAll(".mark"), function (mark) {
      var layers = mark.getAttribute("data-layers").split(" ");
      var visible = layers.some(function (k) { return !hidden[k]; });
      mark.classList.toggle("off", !visible);
    });
  }
  Array.prototype.forEach.call(root.querySelectorAll("input[data-layer]"), function (box) {
    box.addEventListener("change", applyLayers);
  });

  Array.prototype.forEach.call(document.querySelectorAll("tr[data-run]"), function (row) {
    row.tabIndex = 0;
    function pick(event) {
      if (event.target.closest && event.target.closest("a")) { return; }
      select(row.getAttribute("data-run"), true);
      root.scrollIntoView({block: "nearest"});
    }
    row.addEventListener("click", pick);
    row.addEventListener("keydown", function (event) { if (event.key === "Enter") { pick(event); } });
  });

  window.addEventListener("resize", show);
  show();
  clear();
  window.nearfarMap = {select: select, selected: function () { return selected; }};
}());
