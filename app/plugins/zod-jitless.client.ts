import { z } from 'zod'

// zod compiles fast object parsers with `new Function` when it can, and probes for that with a test call.
// The Content-Security-Policy forbids eval (the probe alone reports a violation), so the browser uses zod's
// plain parsers from the start; they are fast enough for every form and sync batch of the product.
export default defineNuxtPlugin({
  name: 'furrowcast:zod-jitless',
  enforce: 'pre',
  setup() {
    z.config({ jitless: true })
  }
})
