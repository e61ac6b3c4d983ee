/** One open session as the account page lists it. */
export interface ActiveSession {
  id: number
  /** A short description of the browser and system, e.g. "Chrome on Android". */
  device: string
  ip: string | null
  createdAt: string
  lastSeenAt: string
  /** The session this list was asked from. */
  current: boolean
}
