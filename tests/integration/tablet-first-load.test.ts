import { request } from 'node:http'
import { brotliDecompressSync, gunzipSync } from 'node:zlib'
import { beforeAll, describe, expect, it } from 'vitest'
import { type Client, baseUrl, demoUser, freshClient } from '../support/server'

// What a tablet's first load over a rural link depends on: the large answers (its setup with the sample lists, the
// visit states) compressed when the tablet accepts it, plain otherwise (read here as raw bytes, so the encoding on the
// wire is what is checked); and the documents of the browser-rendered field pages naming their page's code, so it is
// fetched beside the entry instead of after it.

let enumerator: Client

function raw(path: string, acceptEncoding: string | null): Promise<{ status: number, encoding: string | undefined, vary: string | undefined, body: Buffer }> {
  return new Promise((resolve, reject) => {
    const headers: Record<string, string> = { 'cookie': enumerator.cookieHeader(), 'x-forwarded-for': '10.9.44.1' }
    if (acceptEncoding !== null) headers['accept-encoding'] = acceptEncoding
    request(`${baseUrl()}${path}`, { headers }, (res) => {
      const parts: Buffer[] = []
      res.on('data', (b: Buffer) => parts.push(b))
      res.on('end', () => resolve({ status: res.statusCode!, encoding: res.headers['content-encoding'], vary: String(res.headers.vary ?? ''), body: Buffer.concat(parts) }))
      res.on('error', reject)
    }).on('error', reject).end()
  })
}

beforeAll(async () => {
  enumerator = freshClient()
  await enumerator.signIn(demoUser('enumerator').email)
})

describe('compressed answers for the tablet', () => {
  it('sends the setup as brotli or gzip as accepted, the same JSON as uncompressed, a fraction of its size', async () => {
    const plain = await raw('/api/field/setup', null)
    expect(plain.status).toBe(200)
    expect(plain.encoding).toBeUndefined()
    const json = JSON.parse(plain.body.toString('utf8')) as { samples: unknown[] }
    expect(json.samples.length).toBeGreaterThan(0)

    const br = await raw('/api/field/setup', 'gzip, deflate, br')
    expect(br.encoding).toBe('br')
    expect(br.vary).toMatch(/accept-encoding/i)
    const fromBr = JSON.parse(brotliDecompressSync(br.body).toString('utf8')) as { fetchedAt: string }
    expect({ ...fromBr, fetchedAt: null }).toEqual({ ...json, fetchedAt: null })
    expect(br.body.length).toBeLessThan(plain.body.length / 3)

    // Brotli refused by its q-value: gzip.
    const gz = await raw('/api/field/setup', 'br;q=0, gzip')
    expect(gz.encoding).toBe('gzip')
    const fromGz = JSON.parse(gunzipSync(gz.body).toString('utf8')) as { fetchedAt: string }
    expect({ ...fromGz, fetchedAt: null }).toEqual({ ...json, fetchedAt: null })

    // Nothing acceptable but identity: plain.
    const identity = await raw('/api/field/setup', 'identity')
    expect(identity.encoding).toBeUndefined()
    expect(JSON.parse(identity.body.toString('utf8'))).toHaveProperty('samples')
  })

  it('leaves a small answer plain, and still refuses a signed-out request', async () => {
    const states = await raw(`/api/sync/visits?since=${encodeURIComponent(new Date(Date.now() + 3_600_000).toISOString())}`, 'br')
    expect(states.status).toBe(200)
    expect(states.encoding).toBeUndefined()
    expect(JSON.parse(states.body.toString('utf8'))).toBeTypeOf('object')
    const anonymous = await fetch(`${baseUrl()}/api/field/setup`, { headers: { 'accept-encoding': 'br', 'x-forwarded-for': '10.9.44.2' } })
    expect(anonymous.status).toBe(401)
  })
})

describe('the field pages\' documents', () => {
  const preloadsOf = (html: string) => [...html.matchAll(/<link rel="modulepreload" as="script" crossorigin href="([^"]+)">/g)].map(m => m[1]!)

  it('name the code of the page asked for beyond the app\'s entry, each file served', async () => {
    const page = async (path: string) => preloadsOf(String((await enumerator.get<string>(path)).body))
    // Another path of the same browser-rendered shell: the entry's own files only.
    const shell = await page('/field/no-such-page')
    const list = (await page('/field')).filter(href => !shell.includes(href))
    const form = (await page('/field/visit')).filter(href => !shell.includes(href))
    expect(shell.length).toBeGreaterThan(0)
    expect(list.length).toBeGreaterThan(0)
    expect(form.length).toBeGreaterThan(0)
    // The visit form's own files are not the list page's (they are fetched when the list opens, not with the entry).
    expect(form.some(href => !list.includes(href))).toBe(true)
    // The session, which the app asks for first once its entry runs, is fetched beside the entry too.
    const SESSION = '<link rel="preload" as="fetch" crossorigin href="/api/_auth/session">'
    for (const path of ['/field', '/field/visit']) expect(String((await enumerator.get<string>(path)).body)).toContain(SESSION)
    for (const href of new Set([...list, ...form])) {
      expect(href).toMatch(/^\/_nuxt\/[\w.-]+\.js$/)
      const file = await fetch(`${baseUrl()}${href}`)
      expect(file.status, href).toBe(200)
      expect(file.headers.get('content-type')).toMatch(/javascript/)
    }
  })
})
