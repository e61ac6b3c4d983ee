// What a tablet needs to work offline: the enumerator's open rounds, their villages and questionnaires.
export default defineRoleHandler(['enumerator'], async (_event, user) => fieldSetupFor(user))
