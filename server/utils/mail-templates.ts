// The messages Furrowcast sends. Pure functions: data in, subject + plain text + HTML out, so they can be
// tested without a mail server. Every value put into HTML is escaped; links are absolute.

export interface MailContent {
  subject: string
  text: string
  html: string
}

export function escapeHtml(value: string): string {
  return value.replace(/[&<>"']/g, c => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', '\'': '&#39;' })[c]!)
}

function layout(heading: string, paragraphs: string[], action?: { label: string, url: string }, footnote?: string): string {
  const body = paragraphs.map(p => `<p style="margin:0 0 16px">${escapeHtml(p)}</p>`).join('')
  const button = action
    ? `<p style="margin:24px 0"><a href="${escapeHtml(action.url)}" style="background:#1f3b2d;color:#f7f4ea;padding:12px 20px;border-radius:8px;font-weight:bold;text-decoration:none">${escapeHtml(action.label)}</a></p>`
    + `<p style="margin:0 0 16px;font-size:14px">Or open this address: ${escapeHtml(action.url)}</p>`
    : ''
  const foot = footnote ? `<p style="margin:24px 0 0;font-size:13px;color:#3f4238">${escapeHtml(footnote)}</p>` : ''
  return `<!doctype html><html><body style="font-family:Arial,sans-serif;color:#1b1d17;background:#f7f4ea;padding:24px">`
    + `<div style="max-width:560px;margin:auto;background:#fff;border-radius:12px;padding:24px">`
    + `<h1 style="font-size:22px;margin:0 0 16px">${escapeHtml(heading)}</h1>${body}${button}${foot}</div></body></html>`
}

function plain(paragraphs: string[], action?: { label: string, url: string }, footnote?: string): string {
  return [...paragraphs, ...(action ? [`${action.label}: ${action.url}`] : []), ...(footnote ? [footnote] : [])].join('\n\n') + '\n'
}

function compose(subject: string, heading: string, paragraphs: string[], action?: { label: string, url: string }, footnote?: string): MailContent {
  return { subject, text: plain(paragraphs, action, footnote), html: layout(heading, paragraphs, action, footnote) }
}

const hours = (n: number) => `${n} hour${n === 1 ? '' : 's'}`
const minutes = (n: number) => n % 60 === 0 ? hours(n / 60) : `${n} minutes`

export function invitationMail(input: {
  organisationName: string
  inviterName: string
  roleLabel: string
  link: string
  validHours: number
}): MailContent {
  return compose(
    `You are invited to ${input.organisationName} on Furrowcast`,
    `Welcome to ${input.organisationName}`,
    [
      `${input.inviterName} has invited you to join ${input.organisationName} on Furrowcast as ${input.roleLabel.toLowerCase()}.`,
      `Open the link below to choose your password. The link works once and expires in ${hours(input.validHours)}.`
    ],
    { label: 'Choose your password', url: input.link },
    'If you did not expect this invitation, you can ignore this message: no account is opened until the link is used.'
  )
}

export function passwordResetMail(input: { name: string, link: string, validMinutes: number }): MailContent {
  return compose(
    'Reset your Furrowcast password',
    'Choose a new password',
    [
      `Hello ${input.name},`,
      `Someone, hopefully you, asked to reset the password of your Furrowcast account. The link below works once and expires in ${minutes(input.validMinutes)}.`,
      'Setting a new password signs you out everywhere else.'
    ],
    { label: 'Choose a new password', url: input.link },
    'If you did not ask for this, ignore this message: your password stays as it is.'
  )
}

export function roundPublishedMail(input: {
  funderName: string
  organisationName: string
  roundName: string
  link: string
}): MailContent {
  return compose(
    `New results from ${input.organisationName}: ${input.roundName}`,
    'A round has been published',
    [
      `Hello ${input.funderName},`,
      `${input.organisationName} has published the results of ${input.roundName}. The village map shows predicted adoption; villages with too few visits stay hidden.`,
      'Predictions are for planning, not for judging the eligibility of any one household.'
    ],
    { label: 'Open the village map', url: input.link }
  )
}

export function visitSentBackMail(input: {
  enumeratorName: string
  farmCode: string
  villageName: string
  reason: string
  reviewerName: string
  link: string
}): MailContent {
  return compose(
    `Visit ${input.farmCode} in ${input.villageName} was sent back`,
    'A visit needs another look',
    [
      `Hello ${input.enumeratorName},`,
      `${input.reviewerName} sent back your visit to farm ${input.farmCode} in ${input.villageName}.`,
      `Reason: ${input.reason}`,
      'Open the visit on your tablet, correct it and send it again.'
    ],
    { label: 'Open the visit', url: input.link }
  )
}
