import { createHash } from 'node:crypto'

/**
 * The Content-Security-Policy of every response. Scripts: this origin only, plus, on HTML pages, the exact
 * inline scripts of that page by their SHA-256 (see inlineScriptHashes); never 'unsafe-inline' or eval.
 * Styles keep 'unsafe-inline': server-rendered Vue writes style="" attributes (bar widths, map legend
 * swatches) and Nuxt inlines component CSS into the page; CSS cannot run script, and no page builds markup
 * from data, so the remaining risk (styling injected markup) is small next to rewriting every bound style.
 */
export function contentSecurityPolicy(scriptHashes: string[] = []): string {
  const tileOrigin = mapTileOrigin()
  return [
    'default-src \'self\'',
    `script-src 'self'${scriptHashes.map(hash => ` '${hash}'`).join('')}`,
    'style-src \'self\' \'unsafe-inline\'',
    `img-src 'self' data: blob:${tileOrigin ? ` ${tileOrigin}` : ''}`,
    'font-src \'self\' data:',
    'connect-src \'self\'',
    'worker-src \'self\'',
    'manifest-src \'self\'',
    'object-src \'none\'',
    'base-uri \'self\'',
    'form-action \'self\'',
    'frame-ancestors \'none\''
  ].join('; ')
}

// The optional tile server of the adoption map (NUXT_PUBLIC_MAP_TILE_URL) is the only other origin allowed.
function mapTileOrigin(): string | null {
  const url = useRuntimeConfig().public.mapTileUrl as string
  if (!url) return null
  try {
    return new URL(url.replace(/\{[a-z]\}/g, 'a')).origin
  }
  catch {
    return null
  }
}

const INLINE_SCRIPT = /<script\b([^>]*)>([\s\S]*?)<\/script>/gi
// Script types a browser runs (or, for import maps, reads as code); JSON data blocks are not scripts.
const RUNNABLE = /^(|text\/javascript|application\/javascript|module|importmap)$/i

/** 'sha256-…' sources for each inline script of an HTML page that the browser would run. */
export function inlineScriptHashes(html: string): string[] {
  const hashes = new Set<string>()
  for (const [, attributes, content] of html.matchAll(INLINE_SCRIPT)) {
    if (/\bsrc\s*=/i.test(attributes!)) continue
    const type = /\btype\s*=\s*["']?([^"'\s>]*)/i.exec(attributes!)?.[1] ?? ''
    if (!RUNNABLE.test(type)) continue
    hashes.add(`sha256-${createHash('sha256').update(content!, 'utf8').digest('base64')}`)
  }
  return [...hashes]
}

/** Headers every response carries, whatever serves it (pages, API, static files, the service worker). */
export function baseSecurityHeaders(https: boolean): Record<string, string> {
  const config = serverConfig()
  const headers: Record<string, string> = {
    'Content-Security-Policy': contentSecurityPolicy(),
    'X-Content-Type-Options': 'nosniff',
    'X-Frame-Options': 'DENY',
    'Referrer-Policy': 'strict-origin-when-cross-origin',
    // Location for visits and the camera for farm photos, from this origin only; nothing else.
    'Permissions-Policy': 'geolocation=(self), camera=(self), microphone=(), payment=(), usb=(), interest-cohort=()',
    'Cross-Origin-Opener-Policy': 'same-origin'
  }
  if (https && config.HSTS_SECONDS > 0) headers['Strict-Transport-Security'] = `max-age=${config.HSTS_SECONDS}; includeSubDomains`
  return headers
}
