// The upload box refuses a file over the size limit in the browser (Dash's upload then sends nothing);
// this says so beside the box, in the record view's message line.
(function () {
  function limit() {
    var el = document.getElementById("upload-limit");
    return el ? Number(el.getAttribute("data-max-bytes")) : 0;
  }
  function check(files) {
    var max = limit();
    if (!max || !files) { return; }
    for (var i = 0; i < files.length; i++) {
      if (files[i].size > max) {
        var msg = document.getElementById("record-message");
        if (msg) {
          msg.textContent = "\u201c" + files[i].name + "\u201d is " + (files[i].size / 1e6).toFixed(1) +
            " MB, larger than the " + (max / 1e6).toFixed(0) + " MB the dashboard accepts; a monitoring " +
            "record is one row a year, so check that this is the right file. The record on show stays.";
        }
      }
    }
  }
  document.addEventListener("change", function (e) {
    var t = e.target;
    if (t && t.type === "file" && t.closest && t.closest(".upload-box")) { check(t.files); }
  }, true);
  document.addEventListener("drop", function (e) {
    var t = e.target;
    if (t && t.closest && t.closest(".upload-box") && e.dataTransfer) { check(e.dataTransfer.files); }
  }, true);
})();
