// token.js: the write token. The service prints a local token at start-up;
// the page asks for it once in a small dialog and keeps it in localStorage.

const KEY = "ridgeflank.writeToken";

/** Returns the stored write token, or "" if none. */
export function getToken() {
  try {
    return localStorage.getItem(KEY) || "";
  } catch {
    return "";
  }
}

/** Stores (or, with "", forgets) the write token. */
export function setToken(token) {
  try {
    if (token) localStorage.setItem(KEY, token);
    else localStorage.removeItem(KEY);
  } catch {
    /* storage unavailable: the token lives for this request only */
  }
  document.dispatchEvent(new CustomEvent("ridgeflank:token"));
}

let pending = null;

/**
 * askForToken opens the token dialog (reason explains why) and resolves to the
 * token entered, or "" if the user cancelled. Concurrent callers share one dialog.
 */
export function askForToken(reason = "") {
  if (pending) return pending;
  const dlg = document.getElementById("token-dialog");
  const input = document.getElementById("token-input");
  const why = document.getElementById("token-reason");
  why.textContent = reason || "Saving needs a write token.";
  input.value = getToken();
  pending = new Promise((resolve) => {
    const done = () => {
      dlg.removeEventListener("close", done);
      pending = null;
      if (dlg.returnValue === "save" && input.value.trim()) {
        setToken(input.value.trim());
        resolve(input.value.trim());
      } else {
        resolve("");
      }
    };
    dlg.addEventListener("close", done);
    dlg.showModal();
    input.focus();
  });
  return pending;
}
