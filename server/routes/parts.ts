/**
 * /api/workspaces/:ws/parts — the library seen as parts by the sheet editor (thin: parse, authorize,
 * call the service): GET the models as part handles, POST texts {text} the texts of the parts a
 * sheet needs (nothing is stored; POST because a sheet is too long for a query string).
 */
import { Router } from 'express'
import { ctx } from '../context'
import { requireCapability } from '../middleware/auth'
import { parse } from '../middleware/validate'
import { partCatalogue } from '../services/part-updates'
import { workspacePartTexts } from '../services/part-library'
import { partTextsBody } from '../../shared/api/parts'

export function partRoutes() {
  const router = Router({ mergeParams: true })
  router.get('/', requireCapability('read'), async (req, res) => {
    res.json(await partCatalogue(ctx(req).db, req.workspace!.id))
  })
  router.post('/texts', requireCapability('read'), async (req, res) => {
    const { text } = parse(partTextsBody, req.body)
    res.json({ texts: await workspacePartTexts(ctx(req).db, req.workspace!.id, text) })
  })
  return router
}
