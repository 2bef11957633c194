// Ask the browser to keep this origin's data under storage pressure.
// Returns "persisted" | "refused" | "unsupported" | "pending". "pending": the
// browser asked the user (Firefox shows a prompt) and nobody has answered after
// PERSIST_WAIT_MS; its promise may never settle, so the page is not held up by
// it, and `onLater(answer)` gets the answer if one comes.
export const PERSIST_WAIT_MS = 2000;

export async function requestPersistence({ onLater = () => {} } = {}) {
  if (!navigator.storage || !navigator.storage.persist || !navigator.storage.persisted) return "unsupported";
  try {
    if (await navigator.storage.persisted()) return "persisted";
    const answer = navigator.storage.persist().then((ok) => (ok ? "persisted" : "refused"), () => "refused");
    const first = await Promise.race([answer, new Promise((r) => setTimeout(() => r("pending"), PERSIST_WAIT_MS))]);
    if (first === "pending") answer.then(onLater);
    return first;
  } catch {
    return "refused";
  }
}
