// Behaviour for the pages, kept out of the HTML so the Content-Security-Policy can forbid inline script.
document.addEventListener("click", function (event) {
  if (event.target.closest("[data-print]")) {
    window.print();
  }
});
