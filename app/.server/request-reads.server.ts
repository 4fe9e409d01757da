/**
 * Reads remembered for the length of one request. A page's loaders (the shell, the study layout,
 * the page) run in parallel on the same request and each asks for the signed-in person, the study
 * and the role: each is read once per request, not once per loader. Only reads (GET, HEAD) are
 * remembered; a request that changes state reads afresh.
 */
const readsOf = new WeakMap<Request, Map<string, Promise<unknown>>>();

/** `read()` once per request and key; later calls on the same request share its answer. */
export function oncePerRequest<T>(request: Request, key: string, read: () => Promise<T>): Promise<T> {
  if (request.method !== "GET" && request.method !== "HEAD") return read();
  let reads = readsOf.get(request);
  if (!reads) readsOf.set(request, (reads = new Map()));
  let found = reads.get(key) as Promise<T> | undefined;
  if (!found) reads.set(key, (found = read()));
  return found;
}

/** Forgets what a request read (its session started or ended). */
export function forgetRequestReads(request: Request): void {
  readsOf.delete(request);
}
