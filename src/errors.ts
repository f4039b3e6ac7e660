/**
 * The error catalogue: every error facetwise reports has a stable code, an HTTP status and a
 * message template, defined here and nowhere else. Code anywhere (model, store, service, http)
 * throws `fail(code, params, field?)`; the HTTP layer maps a FacetwiseError to
 * `{error: {code, message, field?}}` with its status. Add a code by adding one entry below.
 */

type Params = Record<string, string | number>;

interface Entry {
  status: number;
  /** Message template; `{name}` is replaced by params.name. Say what is wrong and what to fix. */
  message: string;
}

export const catalogue = {
  INVALID_DEFINITION: { status: 400, message: "The page definition is invalid: {reason}" },
  UNKNOWN_FACTOR: { status: 400, message: 'Unknown factor "{factor}": the page has {known}' },
  UNKNOWN_LEVEL: { status: 400, message: 'Unknown level "{level}" of factor "{factor}": it has {known}' },
  INVALID_COMBINATION_KEY: { status: 400, message: 'Invalid combination key "{key}": {reason}' },
  INVALID_SETTING: { status: 400, message: 'Invalid setting "{setting}": {reason}' },
  NUMERICAL_FAILURE: { status: 500, message: "Numerical failure in {where}: {reason}" },
  INVALID_FOLD_ROW: { status: 400, message: 'Invalid fold row for segment "{segment}": {reason}' },
  INVALID_MODEL_STATE: { status: 500, message: "The stored model state cannot be used: {reason}" },
  INVALID_ARGUMENT: { status: 400, message: 'Invalid argument "{argument}": {reason}' },
  INVALID_SCENARIO: { status: 400, message: 'Invalid scenario at "{path}": {reason}' },
  INVALID_OPTION: { status: 400, message: "Invalid option {option}: {reason}" },
  INVALID_REQUEST: { status: 400, message: "{field}: {reason}" },
  MALFORMED_JSON: { status: 400, message: "The request body is not valid JSON: {reason}" },
  BODY_TOO_LARGE: { status: 413, message: "The request body is larger than {limit}; send less" },
  UNAUTHORIZED: { status: 401, message: "{reason}" },
  FORBIDDEN: { status: 403, message: "{reason}" },
  UNKNOWN_PAGE: { status: 404, message: 'No page with key "{page}"; list pages with GET /api/v1/pages' },
  PAGE_EXISTS: { status: 409, message: 'A page with key "{page}" already exists; choose another key' },
  UNKNOWN_PICK: { status: 404, message: 'No pick "{pick}" on page "{page}"; send the pick id returned by POST /picks' },
  EVENT_REUSED: { status: 409, message: 'Event "{event}" was already recorded for another pick ({other}), so this conversion of pick {pick} was not stored; event ids are unique per page — send a new event id for each conversion' },
  PAGE_CHANGED: { status: 412, message: 'Page "{page}" was changed since you read it (If-Match {given}, now {current}); nothing was applied — read the page again and redo your edit on what it shows' },
  RATE_LIMITED: { status: 429, message: "Too many requests {what}; retry after {retryAfter} s" },
  NOT_FOUND: { status: 404, message: "No route {method} {path}; see the API list in the README" },
  NOT_DEMO_PAGE: { status: 409, message: 'Page "{page}" is not the demo page; demo traffic only runs on the seeded demo' },
  DATABASE_UNAVAILABLE: { status: 503, message: "The database is unavailable ({reason}); retry shortly" },
  DATABASE_BUSY: { status: 503, message: "The database could not finish this write because of concurrent writes ({reason}); nothing was stored, retry shortly" },
  INTERNAL: { status: 500, message: "Internal error ({reference}); the server log has the details" },
  MIGRATION_CHANGED: { status: 500, message: 'Migration "{migration}" was edited after it was applied (checksum {applied} in the database, {current} on disk); restore the file and put the change in a new migration' },
  MIGRATION_UNKNOWN: { status: 500, message: 'The database has migration "{migration}" applied, which this version of facetwise does not have; run the newer version or use another database' },
  MIGRATION_FAILED: { status: 500, message: 'Migration "{migration}" failed: {reason}; nothing was applied' },
  INVALID_MIGRATIONS: { status: 500, message: "The migrations folder {folder} is not usable: {reason}" },
  DATA_FOLDER_IN_USE: { status: 503, message: "The data folder {folder} is in use by another facetwise process (pid {pid}); stop it, or pass another folder with --data" },
} as const satisfies Record<string, Entry>;

export type ErrorCode = keyof typeof catalogue;

export class FacetwiseError extends Error {
  readonly code: ErrorCode;
  readonly status: number;
  readonly field?: string;
  readonly params: Params;

  constructor(code: ErrorCode, params: Params = {}, field?: string) {
    super(formatMessage(code, params));
    this.name = "FacetwiseError";
    this.code = code;
    this.status = catalogue[code].status;
    this.params = params;
    if (field !== undefined) this.field = field;
  }

  toJSON(): { code: ErrorCode; message: string; field?: string } {
    return this.field === undefined
      ? { code: this.code, message: this.message }
      : { code: this.code, message: this.message, field: this.field };
  }
}

/** Fills a code's template; a placeholder without a param is left visible so tests catch it. */
export function formatMessage(code: ErrorCode, params: Params): string {
  return catalogue[code].message.replace(/\{(\w+)\}/g, (whole, name: string) =>
    name in params ? String(params[name]) : whole,
  );
}

/** Builds the error to throw: `throw fail("UNKNOWN_LEVEL", {level, factor, known}, "levels")`. */
export function fail(code: ErrorCode, params: Params = {}, field?: string): FacetwiseError {
  return new FacetwiseError(code, params, field);
}
