// Ask the browser to keep this origin's data under storage pressure.
// Returns "persisted" | "refused" | "unsupported".
export async function requestPersistence() {
  if (!navigator.storage || !navigator.storage.persist) return "unsupported";
  try {
    if (await navigator.storage.persisted()) return "persisted";
    return (await navigator.storage.persist()) ? "persisted" : "refused";
  } catch {
    return "refused";
  }
}
