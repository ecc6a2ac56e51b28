// Recomputing a page: POST the form's inputs and show the answer. Each call supersedes
// the ones still in flight, whose answers and failures are dropped, so a slow answer
// to old inputs never overwrites a newer one; `busy` carries the class "busy" meanwhile.
import { api, ApiError } from "./common.js";

// Returns recompute(): done(inputs, answer) on success; failed(problem) with an ApiError,
// or {message, field: ""} when the server could not be reached.
export function latestPost(path, getInputs, busy, { done, failed }) {
  let seq = 0;
  return async function recompute() {
    const inputs = getInputs();
    const mine = ++seq;
    busy.classList.add("busy");
    try {
      const answer = await api(path, inputs);
      if (mine === seq) done(inputs, answer);
    } catch (e) {
      if (mine === seq) failed(e instanceof ApiError ? e : { message: `Could not reach ohmpick (${e.message}).`, field: "" });
    } finally {
      if (mine === seq) busy.classList.remove("busy");
    }
  };
}
