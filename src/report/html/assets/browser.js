// The document browser: filters the compact document table embedded in the
// page (a JSON script element) and shows it a page at a time. Every piece of
// document text is set with textContent, never parsed as HTML.
(function () {
  "use strict";
  var source = document.getElementById("document-data");
  var body = document.getElementById("browser-rows");
  if (!source || !body) { return; }
  var data = JSON.parse(source.textContent);
  var rows = data.rows;
  var pageSize = 50;
  var page = 0;
  var shown = rows;
  var idBox = document.getElementById("filter-id");
  var labelBox = document.getElementById("filter-label");
  var topicBox = document.getElementById("filter-topic");
  var status = document.getElementById("browser-status");
  var previous = document.getElementById("page-previous");
  var next = document.getElementById("page-next");

  function percent(permille) { return (permille / 10).toFixed(1) + "%"; }

  function cell(row, text, className) {
    var td = document.createElement("td");
    td.textContent = text;
    if (className) { td.className = className; }
    row.appendChild(td);
    return td;
  }

  function topicCell(row, topic, permille) {
    var td = cell(row, "", "topic-cell");
    var info = data.topics[topic];
    var bar = document.createElement("span");
    bar.className = "minibar";
    var fill = document.createElement("span");
    fill.style.width = (permille / 10) + "%";
    fill.style.background = info[2];
    bar.appendChild(fill);
    td.appendChild(bar);
    var link = document.createElement("a");
    link.href = "#topic-" + info[0];
    link.textContent = info[0] + " " + info[1];
    link.style.color = info[2];
    td.appendChild(link);
    td.appendChild(document.createTextNode(" " + percent(permille)));
  }

  function draw() {
    var pages = Math.max(1, Math.ceil(shown.length / pageSize));
    page = Math.min(Math.max(page, 0), pages - 1);
    var first = page * pageSize;
    var last = Math.min(first + pageSize, shown.length);
    var fragment = document.createDocumentFragment();
    for (var i = first; i < last; i += 1) {
      var r = shown[i];
      var tr = document.createElement("tr");
      cell(tr, r[0], "mono");
      cell(tr, r[1] < 0 ? "" : data.labels[r[1]]);
      cell(tr, r[2]);
      cell(tr, String(r[3]), "n");
      topicCell(tr, r[4], r[5]);
      topicCell(tr, r[6], r[7]);
      fragment.appendChild(tr);
    }
    body.replaceChildren(fragment);
    status.textContent = shown.length === 0
      ? "No document matches."
      : "Documents " + (first + 1) + "–" + last + " of " + shown.length +
        (shown.length < rows.length ? " (filtered from " + rows.length + ")" : "") +
        ", page " + (page + 1) + " of " + pages + ".";
    previous.disabled = page === 0;
    next.disabled = page >= pages - 1;
  }

  function applyFilters() {
    var idText = idBox.value.trim().toLowerCase();
    var labelValue = labelBox ? labelBox.value : "";
    var exactLabel = labelBox && labelBox.tagName === "SELECT";
    var labelText = labelValue.trim().toLowerCase();
    var topicValue = topicBox.value === "" ? -1 : Number(topicBox.value);
    shown = rows.filter(function (r) {
      if (idText && r[0].toLowerCase().indexOf(idText) < 0) { return false; }
      if (labelText) {
        var label = r[1] < 0 ? "" : data.labels[r[1]];
        if (exactLabel ? label !== labelValue : label.toLowerCase().indexOf(labelText) < 0) { return false; }
      }
      if (topicValue >= 0 && r[4] !== topicValue) { return false; }
      return true;
    });
    page = 0;
    draw();
  }

  idBox.addEventListener("input", applyFilters);
  if (labelBox) { labelBox.addEventListener(labelBox.tagName === "SELECT" ? "change" : "input", applyFilters); }
  topicBox.addEventListener("change", applyFilters);
  previous.addEventListener("click", function () { page -= 1; draw(); });
  next.addEventListener("click", function () { page += 1; draw(); });
  draw();
}());
