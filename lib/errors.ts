/**
 * Typed errors. Every error that can reach a user carries a stable `code`
 * (scripts and the app switch on it) and a message that says what was wrong
 * and what to do. The CLI prints `error: <message>`; the app shows the message.
 */
export type ErrorCode =
  | 'NOT_LAS'            // the bytes are not a LAS/LAZ file
  | 'TRUNCATED'          // header, VLRs or point data end early
  | 'BAD_HEADER'         // header fields contradict each other or the format
  | 'UNSUPPORTED'        // a valid file using a feature this reader does not handle
  | 'CORRUPT_LAZ'        // compressed data decodes to impossible points or fails
  | 'BAD_XYZ'            // text cloud with no usable points
  | 'BAD_OPTIONS'        // options out of range or inconsistent
  | 'CRS_UNKNOWN'        // the survey has no CRS and none was given
  | 'CRS_UNSUPPORTED'    // a CRS the carried definitions cannot transform
  | 'TOO_LARGE'          // a grid or buffer beyond the memory budget
  | 'NO_GROUND'          // no ground surface could be made
  | 'EMPTY'              // nothing to process (no usable points)
  | 'ABORTED'            // the caller cancelled
  | 'BAD_MESSAGE'        // a malformed worker message
  | 'INTERNAL';          // a bug: report it

export class CrowntallyError extends Error {
  readonly code: ErrorCode;
  /** Extra machine-readable facts (offsets, sizes, suggested values). */
  readonly details?: Record<string, unknown>;
  constructor(code: ErrorCode, message: string, details?: Record<string, unknown>) {
    super(message);
    this.name = 'CrowntallyError';
    this.code = code;
    if (details) this.details = details;
  }
}

export class AbortError extends CrowntallyError {
  constructor(message = 'processing was cancelled') {
    super('ABORTED', message);
    this.name = 'AbortError';
  }
}

export function isCrowntallyError(e: unknown): e is CrowntallyError {
  return e instanceof CrowntallyError ||
    (typeof e === 'object' && e !== null && typeof (e as { code?: unknown }).code === 'string' &&
      (e as { name?: unknown }).name === 'CrowntallyError');
}

/** Throws AbortError when the signal has fired. Call between chunks, rows or stages. */
export function throwIfAborted(signal?: AbortSignal): void {
  if (signal?.aborted) throw new AbortError();
}

/** Plain-object form for crossing a worker boundary. */
export interface SerializedError { code: ErrorCode; message: string; details?: Record<string, unknown> }

export function serializeError(e: unknown): SerializedError {
  if (isCrowntallyError(e)) return { code: e.code, message: e.message, ...(e.details ? { details: e.details } : {}) };
  const msg = e instanceof Error ? e.message : String(e);
  if (e instanceof RangeError && /allocation|memory|Array buffer/i.test(msg)) {
    return { code: 'TOO_LARGE', message: `ran out of memory (${msg}); try a larger cell size, tiles, or a smaller area` };
  }
  return { code: 'INTERNAL', message: `internal failure: ${msg}` };
}

export function deserializeError(s: SerializedError): CrowntallyError {
  return s.code === 'ABORTED' ? new AbortError(s.message) : new CrowntallyError(s.code, s.message, s.details);
}
