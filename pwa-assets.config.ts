import { defineConfig, minimal2023Preset } from '@vite-pwa/assets-generator/config'

// PWA icons are generated at build time from the product's own SVG mark.
export default defineConfig({
  headLinkOptions: { preset: '2023' },
  preset: minimal2023Preset,
  images: ['public/logo.svg']
})
