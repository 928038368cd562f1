/** Search helpers for list endpoints' `q` parameter. */
import { Op } from 'sequelize';

/** A `LIKE '%q%'` condition with the LIKE wildcards in `q` escaped (a search for "10%" finds "10%"). */
export function contains(q: string): { [Op.like]: string } {
  return { [Op.like]: `%${q.replace(/[\\%_]/g, (m) => `\\${m}`)}%` };
}
