import { describe, expect, it } from "vitest";
import { FacetwiseError, fail } from "../src/errors.ts";
import { receiveError, sendError } from "../src/worker.ts";

describe("errors across a worker thread", () => {
  it("come back as the same catalogue error, and plain errors as plain errors", () => {
    // structuredClone is what postMessage applies (HTML standard, "StructuredSerialize").
    const sent = structuredClone(sendError(fail("INVALID_SETTING", { setting: "samples", reason: "too small" }, "samples")));
    const back = receiveError(sent);
    expect(back).toBeInstanceOf(FacetwiseError);
    expect((back as FacetwiseError).toJSON()).toEqual({ code: "INVALID_SETTING", message: 'Invalid setting "samples": too small', field: "samples" });
    expect((back as FacetwiseError).status).toBe(400);
    const plain = receiveError(structuredClone(sendError(new RangeError("boom"))));
    expect(plain).not.toBeInstanceOf(FacetwiseError);
    expect(plain.message).toBe("boom");
  });
});
