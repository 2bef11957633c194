// Wraps the worker's fetch so that nothing is ever requested from another
// origin (the app is offline-first and has no third-party requests), and so
// that boot stages can follow the runtime's own downloads.

export function prepareFetchGuard(scope, origin, { onFetch = () => {}, onFetched = () => {} } = {}) {
  const nativeFetch = scope.fetch.bind(scope);
  scope.fetch = (input, init) => {
    const url = new URL(typeof input === "string" || input instanceof URL ? input : input.url, scope.location.href);
    if (url.origin !== origin) {
      const err = new TypeError(`tamis blocked a request to another origin (${url.origin}); ` +
        "every file the app needs is served from its own origin");
      console.error(err.message);
      return Promise.reject(err);
    }
    onFetch(url);
    return nativeFetch(input, init).then((response) => {
      onFetched(url, response);
      return response;
    });
  };
  return { nativeFetch };
}
