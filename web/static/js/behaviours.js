// Small page behaviours without inline handlers (the Content-Security-Policy allows scripts from our origin only):
// <button data-print> prints the page; <form data-confirm="question"> asks before it is submitted.
document.addEventListener("click", (event) => {
  if (event.target.closest("[data-print]")) window.print();
});
document.addEventListener("submit", (event) => {
  const form = event.target.closest("form[data-confirm]");
  if (form && !window.confirm(form.dataset.confirm)) event.preventDefault();
});
