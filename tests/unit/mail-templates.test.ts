import { describe, expect, it } from 'vitest'
import { escapeHtml, invitationMail, passwordResetMail, roundPublishedMail, visitSentBackMail } from '../../server/utils/mail-templates'

const LINK = 'https://furrowcast.example/welcome?token=12.abc_DEF-ghi'

describe('mail templates', () => {
  it('invitation: names the organisation, role, inviter and lifetime, and carries the link in both bodies', () => {
    const mail = invitationMail({ organisationName: 'Kestrel Valley Growers Trust', inviterName: 'Imani Rukundo', roleLabel: 'Coordinator', link: LINK, validHours: 72 })
    expect(mail.subject).toBe('You are invited to Kestrel Valley Growers Trust on Furrowcast')
    expect(mail.text).toContain('Imani Rukundo has invited you to join Kestrel Valley Growers Trust on Furrowcast as coordinator.')
    expect(mail.text).toContain('expires in 72 hours')
    expect(mail.text).toContain(`Choose your password: ${LINK}`)
    expect(mail.html).toContain(`href="${LINK}"`)
  })

  it('reset: states the lifetime in minutes or hours and that other sessions end', () => {
    expect(passwordResetMail({ name: 'Tobias', link: LINK, validMinutes: 60 }).text).toContain('expires in 1 hour')
    const mail = passwordResetMail({ name: 'Tobias', link: LINK, validMinutes: 45 })
    expect(mail.text).toContain('expires in 45 minutes')
    expect(mail.text).toContain('signs you out everywhere else')
    expect(mail.subject).toBe('Reset your Furrowcast password')
  })

  it('round published: tells the funder which round and carries the planning caution', () => {
    const mail = roundPublishedMail({ funderName: 'Halvard Osei', organisationName: 'Kestrel Valley Growers Trust', roundName: 'Drought-tolerant maize, long rains 2026', link: 'https://furrowcast.example/' })
    expect(mail.subject).toBe('New results from Kestrel Valley Growers Trust: Drought-tolerant maize, long rains 2026')
    expect(mail.text).toContain('not for judging the eligibility of any one household')
    expect(mail.html).toContain('Open the village map')
  })

  it('visit sent back: gives the farm, village, reviewer and reason', () => {
    const mail = visitSentBackMail({ enumeratorName: 'Wanjiru', farmCode: 'KV-0142', villageName: 'Lower Ombara', reason: 'GPS fix is 4 km from the village', reviewerName: 'Tobias Ndlela', link: 'https://furrowcast.example/visits/9' })
    expect(mail.subject).toBe('Visit KV-0142 in Lower Ombara was sent back')
    expect(mail.text).toContain('Reason: GPS fix is 4 km from the village')
    expect(mail.text).toContain('Tobias Ndlela sent back your visit to farm KV-0142 in Lower Ombara.')
  })

  it('escapes every value put into HTML, while the text body keeps it as typed', () => {
    const mail = visitSentBackMail({ enumeratorName: '<script>x</script>', farmCode: 'A&B', villageName: '"Q"', reason: 'it\'s <b>bad</b>', reviewerName: 'R', link: 'https://furrowcast.example/?a=1&b="2"' })
    expect(mail.html).not.toContain('<script>')
    expect(mail.html).not.toContain('<b>bad</b>')
    expect(mail.html).toContain('&lt;script&gt;x&lt;/script&gt;')
    expect(mail.html).toContain('href="https://furrowcast.example/?a=1&amp;b=&quot;2&quot;"')
    expect(mail.text).toContain('Reason: it\'s <b>bad</b>')
    expect(escapeHtml('&<>"\'')).toBe('&amp;&lt;&gt;&quot;&#39;')
  })
})
