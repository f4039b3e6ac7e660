/**
 * The console's only door to the server: JSON over /api/v1 with the admin token as a Bearer
 * header. A 401 ends the session (the token was revoked or mistyped); every other error keeps
 * the server's own code, message and field so forms can show them as they are.
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

async function send(method: string, path: string, body?: unknown, candidate?: string): Promise<Response> {
  const token = candidate ?? getToken();
  const headers: Record<string, string> = { Accept: "application/json" };
  if (token) headers.Authorization = `Bearer ${token}`;
  if (body !== undefined) headers["Content-Type"] = "application/json";
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

export async function api<T>(method: string, path: string, body?: unknown): Promise<T> {
  const response = await send(method, path, body);
  if (response.status === 204) return undefined as T;
  const text = await response.text();
  return (text ? JSON.parse(text) : undefined) as T;
}

/** Checks a token before it is stored (GET /session). */
export async function checkToken(token: string): Promise<void> {
  await send("GET", "/session", undefined, token);
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
