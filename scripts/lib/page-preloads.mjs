// The script files a page needs beyond the app's entry, read from the client build's manifest: the server names them
// as modulepreload hints in the documents of the pages rendered in the browser (server/plugins/page-preloads.ts).
import path from 'node:path'

/**
 * For each path, its page's (a manifest key such as `pages/field/index.vue`) own file and everything it imports
 * statically, in the manifest's order, without what the entry already brings.
 * @param {Record<string, { file?: string, imports?: string[], isEntry?: boolean }>} manifest
 * @param {Record<string, string>} pages path → manifest key of its page
 * @returns {Record<string, string[]>} path → file names
 */
export function pagePreloads(manifest, pages) {
  const closure = (key, into) => {
    if (into.has(key) || !manifest[key]) return into
    into.add(key)
    for (const next of manifest[key].imports ?? []) closure(next, into)
    return into
  }
  const fromEntry = new Set()
  for (const [key, meta] of Object.entries(manifest)) if (meta.isEntry) closure(key, fromEntry)
  const result = {}
  for (const [route, page] of Object.entries(pages)) {
    result[route] = [...closure(page, new Set())]
      .filter(key => !fromEntry.has(key) && manifest[key].file?.endsWith('.js'))
      .map(key => path.basename(manifest[key].file))
  }
  return result
}
