import path from 'node:path'
import { bundleFitWorker } from './scripts/lib/bundle-fit-worker.mjs'
import { pagePreloads } from './scripts/lib/page-preloads.mjs'

// Changes with every build, so that a new deployment's tablet shell replaces the precached one.
const BUILD_ID = String(Date.now())

// The browser-rendered tablet pages (path → page) whose code the server names in their documents
// (server/plugins/page-preloads.ts); filled from the client build's manifest, written before the server is bundled.
const PRELOADED_PAGES = { '/field': 'pages/field/index.vue', '/field/visit': 'pages/field/visit.vue' }
let preloads: Record<string, string[]> = {}

// Furrowcast: one Nuxt 4 app serving the tablet (offline PWA), the coordinator's workspace and the funder view.
export default defineNuxtConfig({
  modules: [
    '@nuxt/eslint',
    '@nuxtjs/tailwindcss',
    '@pinia/nuxt',
    '@vite-pwa/nuxt',
    'nuxt-auth-utils'
  ],
  devtools: { enabled: false },
  app: {
    head: {
      title: 'Furrowcast',
      htmlAttrs: { lang: 'en' },
      meta: [
        { name: 'viewport', content: 'width=device-width, initial-scale=1' },
        { name: 'theme-color', content: '#1f3b2d' },
        { name: 'description', content: 'Farm visits, adoption models and village maps for agricultural programmes.' }
      ],
      link: [{ rel: 'icon', type: 'image/svg+xml', href: '/favicon.svg' }]
    }
  },
  // Fonts ship inside the bundle from @fontsource: no font CDN is reachable in the field or here.
  css: [
    '@fontsource/atkinson-hyperlegible/400.css',
    '@fontsource/atkinson-hyperlegible/700.css',
    '@fontsource/ibm-plex-mono/400.css'
  ],
  runtimeConfig: {
    public: {
      // Optional tile server for the adoption map (e.g. https://tiles.example.org/{z}/{x}/{y}.png); without it
      // the map draws the Natural Earth outlines shipped with the app. Set NUXT_PUBLIC_MAP_TILE_URL.
      mapTileUrl: '',
      // Minutes without a touch or key before the tablet's field store locks (NUXT_PUBLIC_FIELD_IDLE_LOCK_MINUTES).
      fieldIdleLockMinutes: 5
    }
  },
  // The tablet pages render in the browser only, so the service worker can serve one precached shell for them offline.
  routeRules: {
    '/field': { ssr: false },
    '/field/**': { ssr: false }
  },
  // Links fetch their page's code when pointed at or focused, not whenever they are on screen: on a tablet's rural
  // link the header's links (home, account) had fetched pages nobody opened while the field page waited for its data.
  experimental: {
    defaults: { nuxtLink: { prefetchOn: { visibility: false, interaction: true } } }
  },
  compatibilityDate: '2026-11-01',
  nitro: {
    virtual: {
      '#page-preloads': () => `export default ${JSON.stringify(preloads)}`
    },
    experimental: { tasks: false },
    // Static files are compressed once at build (gzip and brotli beside each file) and served with the encoding
    // the browser accepts: the tablet's first load over a rural link is a third of its raw size.
    compressPublicAssets: { gzip: true, brotli: true },
    hooks: {
      // Model fits run in worker threads; the worker needs a file of its own beside the built server.
      async compiled(nitro) {
        if (nitro.options.dev) return
        await bundleFitWorker(path.join(nitro.options.output.serverDir, 'workers', 'fit.worker.mjs'))
      }
    }
  },
  typescript: {
    strict: true,
    typeCheck: false
  },
  hooks: {
    'build:manifest'(manifest) {
      preloads = pagePreloads(manifest, PRELOADED_PAGES)
    }
  },
  eslint: {
    config: {
      stylistic: { quotes: 'single', commaDangle: 'never' }
    }
  },
  pwa: {
    registerType: 'prompt',
    injectRegister: false,
    pwaAssets: { config: true },
    manifest: {
      name: 'Furrowcast',
      short_name: 'Furrowcast',
      description: 'Record farm visits offline and follow technology adoption by village.',
      theme_color: '#1f3b2d',
      background_color: '#f7f4ea',
      display: 'standalone',
      start_url: '/field'
    },
    workbox: {
      // The client-rendered shell of the tablet pages is precached with the build's assets; any /field page
      // opened with no network is served from it (other pages need the server and are not offered offline).
      navigateFallback: '/field',
      navigateFallbackAllowlist: [/^\/field(\/|\?|$)/],
      navigateFallbackDenylist: [/^\/api\//],
      additionalManifestEntries: [{ url: '/field', revision: BUILD_ID }],
      globPatterns: ['**/*.{js,css,html,svg,png,woff,woff2,json}'],
      // The map's base layer (Natural Earth outlines, 750 kB) is not precached: every tablet would download it
      // on its first visit. The map keeps it in a runtime cache when it is first drawn online (below).
      globIgnores: ['**/countries-*.json'],
      // The adoption map opens offline with the figures last seen online: its page and its aggregate data
      // are kept network-first (the network always wins when there is one).
      runtimeCaching: [
        {
          urlPattern: ({ url }) => /\/_nuxt\/countries-[^/]+\.json$/.test(url.pathname),
          handler: 'CacheFirst',
          options: { cacheName: 'furrowcast-map-outlines', expiration: { maxEntries: 2 } }
        },
        {
          urlPattern: ({ url, request }) => request.mode === 'navigate' && url.pathname === '/overview',
          handler: 'NetworkFirst',
          options: { cacheName: 'furrowcast-overview-pages', networkTimeoutSeconds: 6 }
        },
        {
          urlPattern: ({ url }) => url.pathname.startsWith('/api/overview'),
          handler: 'NetworkFirst',
          options: { cacheName: 'furrowcast-overview-data', networkTimeoutSeconds: 6 }
        }
      ]
    },
    client: { installPrompt: true }
  },
  tailwindcss: {
    cssPath: '~/assets/css/main.css'
  }
})
