/** `models[0].thresholds[1]`, `segments["line=2"].n`: the path of a bad field, as error messages name it. */
const PLAIN_KEY = /^[A-Za-z_$][\w$]*$/;

/** Plain keys joined with dots, indexes in brackets, anything else quoted in brackets; '' for the root. */
export function fieldPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else if (typeof key === 'string' && PLAIN_KEY.test(key)) out += out === '' ? key : `.${key}`;
    else out += `[${JSON.stringify(String(key))}]`;
  }
  return out;
}
