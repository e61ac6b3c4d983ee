// Security headers on every response, set when the request arrives so static files and errors carry them
// too; HTML pages then get their own CSP naming the SHA-256 of each inline script Nuxt wrote into them.
// Hashes rather than nonces: the tablet's /field shell is precached by the service worker with its headers
// and served again offline, so a policy must describe the page's content, not one response.
export default defineNitroPlugin((nitroApp) => {
  nitroApp.hooks.hook('request', (event) => {
    const trust = serverConfig().FURROWCAST_TRUST_PROXY === '1'
    const https = getRequestProtocol(event, { xForwardedProto: trust }) === 'https' || serverConfig().PUBLIC_URL.startsWith('https://')
    setResponseHeaders(event, baseSecurityHeaders(https))
  })
  nitroApp.hooks.hook('render:response', (response) => {
    const headers = (response.headers ??= {}) as Record<string, string>
    delete headers['x-powered-by']
    if (typeof response.body === 'string') headers['content-security-policy'] = contentSecurityPolicy(inlineScriptHashes(response.body))
  })
})
