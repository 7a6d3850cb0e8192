/**
 * Lookups keyed by user-supplied names (features, actions, variants, groups, potentials). A plain
 * object inherits `constructor`, `toString`, `valueOf`, ... from Object.prototype; these helpers read
 * and create only own properties, so a name is data and never reaches the prototype.
 */

/** The own property `key` of `obj`, or undefined (never an inherited one). */
export function ownValue<T>(obj: Readonly<Record<string, T>> | undefined | null, key: string): T | undefined {
  return obj != null && Object.hasOwn(obj, key) ? obj[key] : undefined;
}

/** An empty dictionary without a prototype: `dict["constructor"]` is undefined until set. */
export function emptyDict<T>(): Record<string, T> {
  return Object.create(null) as Record<string, T>;
}
