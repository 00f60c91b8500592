// A "Copy" button beside a read-only field: data-copy names the field's id. Without scripts (or without
// clipboard access) the button stays hidden and the address can be selected by hand.
export function wireCopyButtons(root = document) {
  const status = root.querySelector("[data-copy-status]");
  for (const button of root.querySelectorAll("[data-copy]")) {
    const field = root.getElementById(button.dataset.copy);
    if (!field || !navigator.clipboard) continue;
    button.hidden = false;
    button.addEventListener("click", async () => {
      try {
        await navigator.clipboard.writeText(field.value);
        if (status) status.textContent = "Copied.";
      } catch {
        field.select();
        if (status) status.textContent = "Select the address and copy it.";
      }
    });
  }
}

wireCopyButtons();
