// An enumerator's tablet sets up its encrypted store (after the first online sign-in): id, escrow key, status token.
export default defineRoleHandler(['enumerator'], async (event, user) => registerDevice(event, user))
