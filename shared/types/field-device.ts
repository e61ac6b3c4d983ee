/** What a tablet receives when it sets up its encrypted store (the token and escrow key are shown once). */
export interface DeviceRegistration {
  deviceId: string
  /** Base64 of a 256-bit AES key: the tablet wraps its data key with it, then forgets it. */
  escrowKey: string
  /** Hex of 32 random bytes: lets the tablet ask whether it was revoked. */
  token: string
}

/** One tablet as the admin sees it on the people page. */
export interface DeviceRow {
  id: string
  personId: number
  personName: string
  personEmail: string
  label: string
  createdAt: string
  lastSeenAt: string | null
  revokedAt: string | null
}
