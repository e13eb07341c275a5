// Copy buttons: the only script of allot serve. Without it the buttons stay
// hidden and the text can be selected and copied by hand.
"use strict";
document.querySelectorAll("button.copy").forEach(function (b) {
  var target = document.getElementById(b.dataset.copy);
  if (!target || !navigator.clipboard) { return; }
  b.hidden = false;
  var label = b.textContent;
  b.addEventListener("click", function () {
    var text = target.innerText.trim();
    navigator.clipboard.writeText(text).then(function () {
      b.textContent = "Copied";
      setTimeout(function () { b.textContent = label; }, 2000);
    }, function () {
      b.textContent = "Could not copy: select the text and copy it by hand";
    });
  });
});
