import { z } from 'zod'

export const signInSchema = z.object({
  email: z.string({ error: 'Enter your e-mail address' }).trim().toLowerCase().email('Enter a valid e-mail address').max(254),
  password: z.string({ error: 'Enter your password' }).min(1, 'Enter your password').max(200, 'Password is too long')
})

export type SignInInput = z.infer<typeof signInSchema>
