import { Op, type WhereOptions } from 'sequelize'
import type { PeopleQuery } from '#shared/utils/schemas/listing'
import type { Page, PersonRow } from '#shared/types/listing'
import { User } from '../db/models'

export async function listPeople(organisationId: number, query: PeopleQuery): Promise<Page<PersonRow>> {
  const where: WhereOptions<User> = { organisationId }
  if (query.role) Object.assign(where, { role: query.role })
  if (query.status) Object.assign(where, { active: query.status === 'active' })
  if (query.search) {
    const like = `%${query.search.replace(/[%_\\]/g, c => `\\${c}`)}%`
    Object.assign(where, { [Op.or]: [{ name: { [Op.like]: like } }, { email: { [Op.like]: like } }] })
  }
  const { rows, count } = await User.findAndCountAll({
    where,
    order: [['name', 'ASC'], ['id', 'ASC']],
    limit: query.pageSize,
    offset: (query.page - 1) * query.pageSize
  })
  return {
    items: rows.map(user => ({
      id: user.id,
      name: user.name,
      email: user.email,
      role: user.role,
      active: user.active,
      lastSignInAt: user.lastSignInAt?.toISOString() ?? null
    })),
    total: count,
    page: query.page,
    pageSize: query.pageSize
  }
}
