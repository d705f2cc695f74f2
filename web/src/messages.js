// messages.js: a live region that tells the reader what went wrong (or right),
// in plain words, one message per line, each dismissible.

const MAX_MESSAGES = 6;

function list() {
  return document.getElementById("messages");
}

/** show adds a message; kind is "error", "warning" or "info". Returns the element. */
export function show(text, kind = "info") {
  const ul = list();
  const li = document.createElement("li");
  li.className = `msg msg-${kind}`;
  li.setAttribute("role", kind === "error" ? "alert" : "status");
  const span = document.createElement("span");
  span.textContent = text;
  const close = document.createElement("button");
  close.type = "button";
  close.className = "msg-close";
  close.setAttribute("aria-label", "Dismiss message");
  close.textContent = "×";
  close.addEventListener("click", () => li.remove());
  li.append(span, close);
  ul.prepend(li);
  while (ul.children.length > MAX_MESSAGES) ul.lastElementChild.remove();
  if (kind === "info") setTimeout(() => li.remove(), 8000);
  return li;
}

/** error shows an exception (usually an ApiError) as an error message. */
export function error(err) {
  show(err?.message || String(err), "error");
}

/** guard runs an async function and reports any failure instead of throwing. */
export async function guard(fn) {
  try {
    return await fn();
  } catch (err) {
    error(err);
    return undefined;
  }
}
