import demo from '../../server/db/demo-people.json'

// Talks to the real built server that `npm test` started, as a browser would: cookies in, cookies out.
export function baseUrl(): string {
  const url = process.env.FURROWCAST_TEST_URL
  if (!url) throw new Error('FURROWCAST_TEST_URL is not set: run these tests through `npm test`, which starts the server.')
  return url
}

export interface Answer<T = unknown> {
  status: number
  body: T
  headers: Headers
}

export class Client {
  private cookies = new Map<string, string>()

  constructor(private readonly ip: string, private readonly url: string = baseUrl()) {}

  /** The Cookie header this client would send (for tests that talk HTTP without this class). */
  cookieHeader(): string {
    return [...this.cookies].map(([k, v]) => `${k}=${v}`).join('; ')
  }

  async request<T = Record<string, unknown>>(method: string, path: string, body?: unknown, rawBody?: string): Promise<Answer<T>> {
    const headers: Record<string, string> = { 'x-forwarded-for': this.ip, 'accept': 'application/json' }
    if (this.cookies.size) headers.cookie = [...this.cookies].map(([k, v]) => `${k}=${v}`).join('; ')
    if (body !== undefined || rawBody !== undefined) headers['content-type'] = 'application/json'
    const response = await fetch(`${this.url}${path}`, {
      method,
      headers,
      body: rawBody ?? (body === undefined ? undefined : JSON.stringify(body)),
      redirect: 'manual'
    })
    for (const cookie of response.headers.getSetCookie()) {
      const [pair] = cookie.split(';')
      const [name, ...rest] = pair!.split('=')
      const value = rest.join('=')
      if (value === '' || /max-age=0/i.test(cookie)) this.cookies.delete(name!)
      else this.cookies.set(name!, value)
    }
    const text = await response.text()
    let parsed: unknown = text
    try {
      parsed = text ? JSON.parse(text) : null
    }
    catch { /* not JSON: keep the text */ }
    return { status: response.status, body: parsed as T, headers: response.headers }
  }

  get<T = Record<string, unknown>>(path: string) {
    return this.request<T>('GET', path)
  }

  post<T = Record<string, unknown>>(path: string, body?: unknown) {
    return this.request<T>('POST', path, body)
  }

  async signIn(email: string, password = DEMO.password) {
    const answer = await this.post('/api/auth/signin', { email, password })
    if (answer.status !== 200) throw new Error(`sign-in as ${email} failed: ${answer.status} ${JSON.stringify(answer.body)}`)
    return answer
  }
}

export const DEMO = demo
export const demoUser = (role: string) => {
  const user = demo.users.find(u => u.role === role)
  if (!user) throw new Error(`no demo user with role ${role}`)
  return user
}

/** A client posing as a fresh address, so that sign-in limits of one test never touch another. */
export function freshClient() {
  const octet = () => 1 + Math.floor(Math.random() * 250)
  return new Client(`10.${octet()}.${octet()}.${octet()}`)
}
