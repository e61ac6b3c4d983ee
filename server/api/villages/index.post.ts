// A new village; its boundary, when given, must be a GeoJSON Polygon or MultiPolygon.
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const body = await readValidatedBody(event, validateWith(villageCreateSchema))
  return createVillage(event, user, body)
})
