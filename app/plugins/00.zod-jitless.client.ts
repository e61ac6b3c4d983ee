import { z } from 'zod'

// zod compiles fast object parsers with `new Function` when it can, and probes for that with a test call when
// a schema is built. The Content-Security-Policy forbids eval (the probe alone reports a violation), so the
// browser uses zod's plain parsers, which are fast enough for every form and sync batch of the product. Set
// when this module is first evaluated (plugins load before any page or schema module), not in setup().
z.config({ jitless: true })

export default defineNuxtPlugin({
  name: 'furrowcast:zod-jitless',
  enforce: 'pre',
  setup() {}
})
