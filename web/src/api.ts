/**
 * The console's only door to the server: JSON over /api/v1 with the admin token as a Bearer
 * header. A 401 ends the session (the token was revoked or mistyped); every other error keeps
 * the server's own code, message and field so forms can show them as they are. Page edits name
 * the version they were made on (RFC 9110 §13.1.1 If-Match with the ETag of the read), so an edit
 * made on a page someone else has changed meanwhile is refused (412 PAGE_CHANGED), not applied over theirs.
 */
import { clearToken, getToken } from "./session.ts";

export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly field?: string,
  ) {
    super(message);
  }
}

/** Fired when the server refuses the stored token, so the shell can return to sign-in. */
export const SIGNED_OUT = "facetwise:signed-out";

/** A JSON answer with its entity tag: the version of the page it shows (null if the answer had none). */
export interface Tagged<T> {
  value: T;
  etag: string | null;
}

interface SendOptions {
  /** a token to check instead of the stored one */
  candidate?: string;
  /** the ETag of the version the edit was made on */
  ifMatch?: string;
}

async function send(method: string, path: string, body?: unknown, { candidate, ifMatch }: SendOptions = {}): Promise<Response> {
  const token = candidate ?? getToken();
  const headers: Record<string, string> = { Accept: "application/json" };
  if (token) headers.Authorization = `Bearer ${token}`;
  if (body !== undefined) headers["Content-Type"] = "application/json";
  if (ifMatch !== undefined) headers["If-Match"] = ifMatch;
  let response: Response;
  try {
    response = await fetch(`/api/v1${path}`, {
      method,
      headers,
      body: body === undefined ? undefined : JSON.stringify(body),
      cache: "no-store",
    });
  } catch {
    throw new ApiError(0, "NETWORK", "The server cannot be reached. Is facetwise still running?");
  }
  if (response.ok) return response;
  let error: { code?: string; message?: string; field?: string } = {};
  try {
    error = ((await response.json()) as { error?: typeof error }).error ?? {};
  } catch {
    // a non-JSON error body (a proxy, a crash page): fall back to the status line below
  }
  if (response.status === 401 && token && candidate === undefined) {
    clearToken();
    window.dispatchEvent(new Event(SIGNED_OUT));
  }
  throw new ApiError(
    response.status,
    error.code ?? `HTTP_${response.status}`,
    error.message ?? `The server answered ${response.status} ${response.statusText}.`,
    error.field,
  );
}

async function json<T>(response: Response): Promise<T> {
  if (response.status === 204) return undefined as T;
  const text = await response.text();
  return (text ? JSON.parse(text) : undefined) as T;
}

export async function api<T>(method: string, path: string, body?: unknown): Promise<T> {
  return json<T>(await send(method, path, body));
}

/**
 * `api` that also answers the ETag, for reads an edit will start from and for the edits
 * themselves; with `ifMatch` the server applies the edit only to that version of the page.
 */
export async function tagged<T>(method: string, path: string, body?: unknown, ifMatch?: string): Promise<Tagged<T>> {
  const response = await send(method, path, body, { ifMatch });
  return { value: await json<T>(response), etag: response.headers.get("ETag") };
}

/** Checks a token before it is stored (GET /session). */
export async function checkToken(token: string): Promise<void> {
  await send("GET", "/session", undefined, { candidate: token });
}

/** Fetches a file with the token in the header and hands it to the browser as a download. */
export async function download(path: string, filename: string): Promise<Blob> {
  const response = await send("GET", path);
  const blob = await response.blob();
  const url = URL.createObjectURL(blob);
  const a = document.createElement("a");
  a.href = url;
  a.download = filename;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
  return blob;
}
