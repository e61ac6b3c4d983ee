import type { H3Event } from 'h3'

/** The caller's address; X-Forwarded-For is believed only behind a trusted load balancer. */
export function clientIp(event: H3Event): string {
  const trustProxy = serverConfig().FURROWCAST_TRUST_PROXY === '1'
  return (getRequestIP(event, { xForwardedFor: trustProxy }) ?? 'unknown').slice(0, 45)
}
