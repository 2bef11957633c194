// e2e only: the Python worker with the error collector loaded first.
import "./errors_scope.js";
import "../src/worker/worker.js";
