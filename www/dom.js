// @ts-check
// Small DOM helpers shared by the page's scripts.

/** The element with this id; a missing one is a bug in the page, said plainly. @param {string} id */
export function byId(id) {
  const node = document.getElementById(id);
  if (!node) throw new Error(`page is missing #${id}`);
  return node;
}

/** Saves `blob` as a file named `name` on this computer (nothing is sent anywhere). */
export function download(/** @type {Blob} */ blob, /** @type {string} */ name) {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}
