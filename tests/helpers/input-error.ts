/** The InputError a call throws (any other error is rethrown; no error at all fails the test). */
import { InputError } from "../../src/errors.js";

export function catchInputError(f: () => unknown): InputError {
  try {
    f();
  } catch (e) {
    if (e instanceof InputError) return e;
    throw e;
  }
  throw new Error("expected an InputError");
}
