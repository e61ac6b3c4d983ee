import { type Client, freshClient } from './server'
import { linkToken, mailsTo, uniqueEmail, waitForMail } from './outbox'

export const GOOD_PASSWORD = 'maize-rows-under-blue-sky'

/** Invites through the API as the given admin and returns the link token from the caught message. */
export async function inviteThroughMail(admin: Client, input: { email?: string, role: string, name?: string }) {
  const email = input.email ?? uniqueEmail(input.role)
  const before = (await mailsTo(email)).length
  const answer = await admin.post<{ userId: number, email: string }>('/api/people/invitations', { ...input, email })
  if (answer.status !== 201) throw new Error(`invitation failed: ${answer.status} ${JSON.stringify(answer.body)}`)
  const mail = await waitForMail(email, before + 1)
  return { email, userId: answer.body.userId, mail, token: linkToken(mail, 'welcome').token }
}

/** A new person of the admin's organisation, invited by mail and with a password set, signed in on a fresh client. */
export async function newPerson(admin: Client, role: string, password = GOOD_PASSWORD) {
  const invited = await inviteThroughMail(admin, { role })
  const accepted = await freshClient().post('/api/auth/password', { token: invited.token, purpose: 'invitation', password })
  if (accepted.status !== 200) throw new Error(`accepting failed: ${accepted.status} ${JSON.stringify(accepted.body)}`)
  const client = freshClient()
  await client.signIn(invited.email, password)
  return { ...invited, client, password }
}
