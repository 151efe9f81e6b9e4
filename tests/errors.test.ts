// Every error code has a description and maps to the documented exit code.
import { describe, expect, it } from "vitest";
import { ERROR_CODES, SiftpackError, describeSystemError, type ErrorCode } from "../src/errors.js";

const EXIT: Record<ErrorCode, 1 | 2> = {
  SP_PIPELINE_FILE: 2,
  SP_PIPELINE_KEY: 2,
  SP_USAGE: 2,
  SP_INPUT_MISSING: 1,
  SP_INPUT_FORMAT: 1,
  SP_BAD_FRACTION: 1,
  SP_OUTPUT: 1,
  SP_VERIFY: 1,
  SP_MANIFEST: 1,
  SP_TOKENIZER: 1,
  SP_LOCK: 1,
  SP_STAGE: 1,
  SP_OVERLAP: 1,
  SP_TASK_ORDER: 1,
  SP_WORK: 1,
  SP_MIXTURE: 1,
};

describe("error codes", () => {
  it.each(Object.keys(ERROR_CODES) as ErrorCode[])("%s exits with the documented code", (code) => {
    const e = new SiftpackError(code, "m", { cause: new Error("c") });
    expect(e.exitCode).toBe(EXIT[code]);
    expect(e.code).toBe(code);
    expect((e.cause as Error).message).toBe("c");
    expect(ERROR_CODES[code].length).toBeGreaterThan(10);
  });
  it("the table above lists every code", () => expect(Object.keys(EXIT).sort()).toEqual(Object.keys(ERROR_CODES).sort()));
  it("system errors read as plain words", () => {
    expect(describeSystemError(Object.assign(new Error("x"), { code: "ENOENT" }))).toBe("no such file or directory");
    expect(describeSystemError(Object.assign(new Error("x"), { code: "ENOSPC" }))).toBe("no space left on device");
  });
});
