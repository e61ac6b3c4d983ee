import { z } from 'zod'

// The tablet's encrypted store and the server's record of it (see server/utils/field-devices.ts).

export const deviceIdSchema = z.uuid({ error: 'Unknown tablet.' })

/** "Am I revoked?": asked by a tablet with the token it was given when it was set up, with or without a session. */
export const deviceStatusSchema = z.object({
  deviceId: deviceIdSchema,
  token: z.string().regex(/^[0-9a-f]{64}$/, 'Unknown tablet.')
})

export type DeviceState = 'active' | 'revoked' | 'unknown'
