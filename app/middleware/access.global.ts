// Mirrors the server's role checks for navigation only; the server decides what data anyone gets.
export default defineNuxtRouteMiddleware(async (to) => {
  const { loggedIn, user } = useUserSession()
  if (PUBLIC_PATHS.includes(to.path)) {
    if (loggedIn.value && to.path === '/signin') return navigateTo('/')
    return
  }
  if (!loggedIn.value) return navigateTo({ path: '/signin', query: to.fullPath === '/' ? {} : { next: to.fullPath } })
  if (!canOpen(to.path, user.value?.role)) {
    throw createError({ statusCode: 403, message: 'Your role does not open this page.', fatal: true })
  }
})
