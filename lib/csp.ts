// The Content-Security-Policy of every page (set by proxy.ts with a fresh nonce per request). It lets
// in what the app needs and nothing else: our own scripts (Next's, carrying the nonce, and what they
// load), the bench's Web Worker and its blob: URLs, images and fonts shipped with the app, byte-range
// reads from our own API or, with the S3 driver, from the object store's presigned URLs.

export interface CspOptions {
  nonce: string;
  /** `next dev` needs eval for React's debugging aids; production builds never do. */
  dev?: boolean;
  /** Origins the browser may fetch from besides our own (the S3 endpoint for presigned reads). */
  connectExtra?: string[];
  /** https deployments ask browsers to upgrade any http sub-request. */
  https?: boolean;
}

export function contentSecurityPolicy({ nonce, dev = false, connectExtra = [], https = false }: CspOptions): string {
  const directives: [string, string[]][] = [
    ["default-src", ["'self'"]],
    // 'strict-dynamic': scripts started by a nonce-carrying script may load further chunks.
    // 'wasm-unsafe-eval' lets the bench compile its WebAssembly pixel kernels (lib/imaging/wasm); it
    // allows compiling WebAssembly only, never JavaScript from strings.
    ["script-src", ["'self'", `'nonce-${nonce}'`, "'strict-dynamic'", "'wasm-unsafe-eval'", ...(dev ? ["'unsafe-eval'"] : [])]],
    // React style attributes (colour swatches, canvas transforms) are inline styles.
    ["style-src", ["'self'", "'unsafe-inline'"]],
    ["img-src", ["'self'", "blob:", "data:"]],
    ["font-src", ["'self'"]],
    ["connect-src", ["'self'", ...connectExtra]],
    ["worker-src", ["'self'", "blob:"]],
    ["object-src", ["'none'"]],
    ["base-uri", ["'self'"]],
    ["form-action", ["'self'"]],
    ["frame-ancestors", ["'none'"]],
  ];
  const text = directives.map(([name, values]) => `${name} ${values.join(" ")}`).join("; ");
  return https ? `${text}; upgrade-insecure-requests` : text;
}

/**
 * The S3 origins presigned reads come from, when the S3 driver is on. Without path-style URLs
 * (S3_FORCE_PATH_STYLE unset) the SDK puts the bucket in the host name — `https://<bucket>.<endpoint
 * host>/key` — except for an IP-address endpoint, which it always addresses path-style; so that
 * origin is allowed too, or the browser would refuse every read of a virtual-hosted bucket.
 */
export function storageOrigins(env: Record<string, string | undefined>): string[] {
  if (env.STORAGE_DRIVER !== "s3") return [];
  if (!env.S3_ENDPOINT) return ["https://*.amazonaws.com"];
  let endpoint: URL;
  try {
    endpoint = new URL(env.S3_ENDPOINT);
  } catch {
    return [];
  }
  const pathStyle = env.S3_FORCE_PATH_STYLE === "1" || env.S3_FORCE_PATH_STYLE === "true";
  const ipAddress = /^\d{1,3}(\.\d{1,3}){3}$/.test(endpoint.hostname) || endpoint.hostname.startsWith("[");
  if (pathStyle || ipAddress || !env.S3_BUCKET) return [endpoint.origin];
  const port = endpoint.port ? `:${endpoint.port}` : "";
  return [endpoint.origin, `${endpoint.protocol}//${env.S3_BUCKET}.${endpoint.hostname}${port}`];
}
