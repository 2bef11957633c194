// Wraps the worker's fetch so that nothing is ever requested from another
// origin (the app is offline-first and has no third-party requests), and so
// that boot stages can follow the runtime's own downloads (onFetched for a
// response with an ok status, onFailed for an error status or a network error).

//
// route(url) -> a Promise<Response> to answer with instead of a plain fetch, or
// null (the worker answers the build's files through one shared download).

export function prepareFetchGuard(scope, origin, { onFetch = () => {}, onFetched = () => {}, onFailed = () => {},
  route = () => null } = {}) {
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
    return (route(url) || nativeFetch(input, init)).then((response) => {
      if (response.ok) onFetched(url, response);
      else onFailed(url, `HTTP ${response.status}`);
      return response;
    }, (err) => {
      onFailed(url, err.message || String(err));
      throw err;
    });
  };
  return { nativeFetch };
}
