// What a tablet needs to work offline: the enumerator's open rounds, their villages and questionnaires.
// Compressed when the tablet accepts it: with the sample lists this is the largest answer a tablet waits for.
export default defineRoleHandler(['enumerator'], async (event, user) => compressedJson(event, await fieldSetupFor(user)))
