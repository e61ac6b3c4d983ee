// A short, readable name for a session's device from its User-Agent, for the account page. Only the
// common families are named; anything else is "Unknown browser". The raw string is never shown.
const BROWSERS: [RegExp, string][] = [
  [/Edg\//, 'Edge'],
  [/OPR\//, 'Opera'],
  [/Firefox\//, 'Firefox'],
  [/HeadlessChrome\//, 'Headless Chrome'],
  [/Chrome\/|Chromium\//, 'Chrome'],
  [/Safari\//, 'Safari'],
  [/^node|undici|curl\//i, 'Script or tool']
]
const SYSTEMS: [RegExp, string][] = [
  [/Android/, 'Android'],
  [/iPhone|iPad|iPod/, 'iOS'],
  [/Windows/, 'Windows'],
  [/Mac OS X|Macintosh/, 'macOS'],
  [/CrOS/, 'ChromeOS'],
  [/Linux/, 'Linux']
]

export function deviceLabel(userAgent: string | null | undefined): string {
  if (!userAgent) return 'Unknown device'
  const browser = BROWSERS.find(([pattern]) => pattern.test(userAgent))?.[1] ?? 'Unknown browser'
  const system = SYSTEMS.find(([pattern]) => pattern.test(userAgent))?.[1]
  return system ? `${browser} on ${system}` : browser
}
