// @ts-expect-error virtual module filled at build time from the client manifest (nuxt.config.ts)
import preloads from '#page-preloads'

// The tablet pages are rendered in the browser (routeRules: ssr false), so the document Nuxt serves for them names
// only the app's entry: the page's own code was requested after the entry had arrived and run, one more round trip on
// a rural link before the enumerator sees anything. This adds modulepreload hints for the code of the page asked for,
// so the browser fetches it alongside the entry. (The vault gate fetches the visit form's code on /field itself, while
// the tablet is busy with its PIN and setup; preloading it in that document too would only compete with the entry.)
// Which paths: PRELOADED_PAGES in nuxt.config.ts.
//
// The file names come from the build's manifest, never from the request; they are checked against the build's
// file-name pattern all the same, since they are written into HTML.

const BUILD_FILE = /^[\w.-]+\.js$/

// The app's first request once its entry has run is the session (nuxt-auth-utils' client plugin); fetched alongside
// the entry instead, its answer is waiting when the plugin asks (the browser hands a preloaded response to the fetch
// with the same address and credentials), one round trip less before the tablet's first screen.
const SESSION_PRELOAD = '<link rel="preload" as="fetch" crossorigin href="/api/_auth/session">'

export default defineNitroPlugin((nitroApp) => {
  // Where the build's files are served from, as Nuxt's own renderer builds it (CDN or base URL + assets folder).
  const { app } = useRuntimeConfig()
  const assets = `${(app.cdnURL || app.baseURL).replace(/\/+$/, '')}/${app.buildAssetsDir.replace(/^\/+|\/+$/g, '')}/`
  const linksOf = new Map(Object.entries(preloads as Record<string, string[]>).map(([path, files]) => [path,
    files.filter(file => BUILD_FILE.test(file))
      .map(file => `<link rel="modulepreload" as="script" crossorigin href="${assets}${file}">`)]))
  nitroApp.hooks.hook('render:html', (html, { event }) => {
    const links = linksOf.get(event.path.split('?')[0]!.replace(/(.)\/$/, '$1'))
    if (links?.length) html.head.push(SESSION_PRELOAD, ...links)
  })
})
