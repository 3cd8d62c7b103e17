// The upload box refuses a file over the size limit in the browser (Dash's upload then sends nothing);
// this says so beside the box, in the message line of the box's view.
(function () {
  function limit() {
    var el = document.getElementById("upload-limit");
    return el ? Number(el.getAttribute("data-max-bytes")) : 0;
  }
  // upload box -> its message line and what to say after the size
  var WHERE = {
    "record-upload": ["record-message", "a monitoring record is one row a year, so check that this is the right " +
      "file. The record on show stays."],
    "region-lakes-upload": ["region-message", "split the region, or use 'turnback screen'. The lakes on show stay."],
    "region-records-upload": ["region-message", "split the region, or use 'turnback screen'. The lakes on show stay."]
  };
  function check(files, box) {
    var max = limit();
    if (!max || !files) { return; }
    var where = WHERE[box && box.id] || WHERE["record-upload"];
    for (var i = 0; i < files.length; i++) {
      if (files[i].size > max) {
        var msg = document.getElementById(where[0]);
        if (msg) {
          msg.textContent = "\u201c" + files[i].name + "\u201d is " + (files[i].size / 1e6).toFixed(1) +
            " MB, larger than the " + (max / 1e6).toFixed(0) + " MB the dashboard accepts; " + where[1];
        }
      }
    }
  }
  function box(t) {
    var e = t;
    while (e && !(e.id && WHERE[e.id])) { e = e.parentElement; }
    return e;
  }
  document.addEventListener("change", function (e) {
    var t = e.target;
    if (t && t.type === "file" && t.closest && t.closest(".upload-box")) { check(t.files, box(t)); }
  }, true);
  document.addEventListener("drop", function (e) {
    var t = e.target;
    if (t && t.closest && t.closest(".upload-box") && e.dataTransfer) { check(e.dataTransfer.files, box(t)); }
  }, true);
})();
