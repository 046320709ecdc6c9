// Editing a review: autosave pauses while the conflict panel is shown (the reader chooses
// between the stored text and their own), and the panel's copy buttons.
document.addEventListener("htmx:beforeRequest", (event) => {
  if (event.detail.elt.id === "review-form" && document.getElementById("edit-conflict")) {
    event.preventDefault();
  }
});

document.addEventListener("click", (event) => {
  const button = event.target.closest("[data-copy]");
  if (!button) return;
  const source = document.getElementById(button.dataset.copy);
  source.focus();
  source.select();
  if (navigator.clipboard) {
    navigator.clipboard.writeText(source.value).then(
      () => { button.textContent = "Copied"; },
      () => { button.textContent = "Selected: press Ctrl+C"; },
    );
  } else {
    button.textContent = "Selected: press Ctrl+C";
  }
});
