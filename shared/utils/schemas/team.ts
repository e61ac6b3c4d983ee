import { z } from 'zod'
import { ROLES } from '../roles'
import { safeText } from './safe-text'

const email = z.string({ error: 'Enter an e-mail address' }).trim().toLowerCase().email('Enter a valid e-mail address').max(254)
const personName = safeText(z.string({ error: 'Enter a name' }).trim().min(1, 'Enter a name').max(160, 'Use at most 160 characters'))
const role = z.enum(ROLES, { error: 'Choose a role' })

// The server also refuses the most common passwords (server/utils/password-policy.ts).
export const newPasswordSchema = safeText(z.string({ error: 'Enter a password' })
  .min(10, 'Use at least 10 characters')
  .max(200, 'Use at most 200 characters'))

export const inviteSchema = z.object({
  email,
  role,
  name: personName.optional().or(z.literal('').transform(() => undefined))
})
export type InviteInput = z.infer<typeof inviteSchema>

export const personUpdateSchema = z.object({
  role: role.optional(),
  active: z.boolean({ error: 'active must be true or false' }).optional()
}).refine(value => value.role !== undefined || value.active !== undefined, { message: 'Send a role, an active flag, or both' })
export type PersonUpdateInput = z.infer<typeof personUpdateSchema>

export const personIdSchema = z.object({ id: z.coerce.number().int().min(1).max(4_294_967_295) })

// A link token as the server issues it: "<id>.<43 url-safe characters>"; anything else is refused as invalid.
const token = z.string({ error: 'The link has no token' }).trim().min(1, 'The link has no token').max(100, 'The link is not valid')
const purpose = z.enum(['invitation', 'reset'], { error: 'Unknown kind of link' })

export const tokenCheckSchema = z.object({ token, purpose })
export type TokenCheckInput = z.infer<typeof tokenCheckSchema>

export const setPasswordSchema = z.object({
  token,
  purpose,
  password: newPasswordSchema,
  name: personName.optional()
})
export type SetPasswordInput = z.infer<typeof setPasswordSchema>

export const forgotSchema = z.object({ email })
export type ForgotInput = z.infer<typeof forgotSchema>

export const changePasswordSchema = z.object({
  currentPassword: z.string({ error: 'Enter your current password' }).min(1, 'Enter your current password').max(200),
  newPassword: newPasswordSchema
})
export type ChangePasswordInput = z.infer<typeof changePasswordSchema>

const funderOrganisation = z.object({
  name: safeText(z.string({ error: 'Enter the funder\'s name' }).trim().min(1, 'Enter the funder\'s name').max(120, 'Use at most 120 characters')),
  emailDomain: z.string({ error: 'Enter an e-mail domain' }).trim().toLowerCase().max(120)
    .regex(/^(?=.{3,120}$)([a-z0-9](?:[a-z0-9-]{0,61}[a-z0-9])?\.)+[a-z]{2,}$/, 'Enter a domain such as funder.example, without @')
})

/**
 * What standard errors can be clustered by: the engine clusters by the sampled unit, the village. A list (not free
 * text) so the setting can only name something the models can use; add a choice here when the engine learns one.
 */
export const CLUSTER_VARIABLES = ['village'] as const
export const CLUSTER_VARIABLE_LABELS: Record<typeof CLUSTER_VARIABLES[number], string> = {
  village: 'Village (the unit that was sampled)'
}

export const settingsSchema = z.object({
  name: safeText(z.string({ error: 'Enter the organisation\'s name' }).trim().min(2, 'Use at least 2 characters').max(160, 'Use at most 160 characters')),
  defaultClusterVariable: z.enum(CLUSTER_VARIABLES, { error: 'Choose what standard errors are clustered by from the list' }),
  minVisitsForFunders: z.number({ error: 'Enter a whole number' }).int('Enter a whole number').min(1, 'Use at least 1').max(1000, 'Use at most 1000'),
  funderOrganisations: z.array(funderOrganisation).max(50, 'At most 50 funder organisations')
    .refine(list => new Set(list.map(f => f.emailDomain)).size === list.length, { message: 'Each e-mail domain may appear only once' })
})
export type SettingsInput = z.infer<typeof settingsSchema>
