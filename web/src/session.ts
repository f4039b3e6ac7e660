/**
 * The admin session: the token lives in sessionStorage (ends with the tab) or, when the user asks
 * to stay signed in, in localStorage. It is never put in a URL. Signing out removes it from both.
 */

const KEY = "facetwise.adminToken";

export function getToken(): string | null {
  return sessionStorage.getItem(KEY) ?? localStorage.getItem(KEY);
}

export function saveToken(token: string, remember: boolean): void {
  clearToken();
  (remember ? localStorage : sessionStorage).setItem(KEY, token);
}

export function clearToken(): void {
  sessionStorage.removeItem(KEY);
  localStorage.removeItem(KEY);
}
