/**
 * /api/v1/imports (admin and technician): CSV import of boxes with their controllers.
 * `POST /imports/boxes?dryRun=1` reports row by row; `POST /imports/boxes` stores all or nothing
 * and answers the new controllers' secrets once; `GET /imports/boxes/template.csv` the template.
 */
import { Router, type RequestHandler } from 'express';
import multer from 'multer';
import { z } from 'zod';
import { IMPORT_COLUMNS, IMPORT_MAX_BYTES } from '../../shared/schemas/imports';
import type { AppContext } from '../context';
import { currentUser, requireRole } from '../auth/guards';
import { parseQuery } from '../http/validate';
import { HttpProblem, problems } from '../http/problem';
import { auditBy } from '../audit/service';
import { decodeCsvText, isCsvMimeType, parseImportCsv } from './csv';
import { ImportRejected, planImport, runImport } from './service';

/** The template served and copied to docs/import-template.csv: the header and two invented example rows. */
export const IMPORT_TEMPLATE_CSV = [
  IMPORT_COLUMNS.join(','),
  'Harrow Street Grocers,Harrow Street — Lakeshore,Beverage walk-in,cooler,R-448A,36,F,41,30,eev,HS-LAKE-0201,1600,2.1.0',
  'Pinecone Corner Markets,Pinecone Corner #12 — Route 9,Ice cream freezer,freezer,R-404A,-23,C,,,eev,PC-12-0202,,',
  '',
].join('\r\n');

const ImportQuery = z.object({ dryRun: z.enum(['0', '1', 'true', 'false']).optional() });

const tooLarge = () => new HttpProblem(413, 'too-large', 'File too large', `An import file may hold at most ${IMPORT_MAX_BYTES / 1024 / 1024} MiB. Split it into several files.`);
const wrongType = (detail: string) => new HttpProblem(415, 'unsupported-media', 'Not a CSV text file', detail);

/** multer with memory storage for one `file` field, its errors mapped to problems (413, 415, 400). */
function uploadOneCsv(): RequestHandler {
  const upload = multer({
    storage: multer.memoryStorage(),
    limits: { fileSize: IMPORT_MAX_BYTES, files: 1, fields: 5, parts: 6, fieldSize: 1024 },
    fileFilter: (_req, file, cb) => {
      if (isCsvMimeType(file.mimetype)) cb(null, true);
      else cb(wrongType(`The file is sent as ${file.mimetype.slice(0, 60)}; upload a CSV text file (text/csv).`));
    },
  }).single('file');
  return (req, res, next) => {
    if (!req.is('multipart/form-data')) return next(wrongType('Send the file as multipart/form-data in a field named "file".'));
    // multer reads the raw stream: a compressed multipart body would reach it undecoded.
    const encoding = (req.headers['content-encoding'] ?? 'identity').trim().toLowerCase();
    if (encoding !== 'identity') return next(new HttpProblem(415, 'unsupported-encoding', 'Unsupported content encoding', 'Send the upload uncompressed (no Content-Encoding).'));
    upload(req, res, (err?: unknown) => {
      if (!err) return next();
      if (err instanceof HttpProblem) return next(err);
      if (err instanceof multer.MulterError) {
        if (err.code === 'LIMIT_FILE_SIZE') return next(tooLarge());
        return next(problems.badRequest(`The upload was refused: ${err.message}. Send one CSV file in the field "file".`));
      }
      // busboy's own errors (no boundary, a truncated or malformed part) are the sender's fault.
      next(problems.badRequest('The upload could not be read as multipart/form-data. Send one CSV file in the field "file".'));
    });
  };
}

/** The imports router. */
export function importRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;
  r.use(requireRole('admin'));

  r.get('/boxes/template.csv', (_req, res) => {
    res.type('text/csv; charset=utf-8').attachment('rimehold-import-template.csv').send(IMPORT_TEMPLATE_CSV);
  });

  r.post('/boxes', uploadOneCsv(), async (req, res) => {
    const user = currentUser(req);
    const q = parseQuery(ImportQuery, req);
    const dryRun = q.dryRun === '1' || q.dryRun === 'true';
    if (!req.file) throw problems.badRequest('No file: send the CSV file in the multipart field "file".');
    const rows = parseImportCsv(decodeCsvText(req.file.buffer));
    const actor = { userId: user.id, requestId: typeof req.id === 'string' ? req.id : null };
    if (dryRun) {
      const { report } = await planImport(models, user, rows);
      res.json(report);
      return;
    }
    try {
      const result = await runImport(ctx, user, actor, rows, req.file.originalname);
      // The secrets are in this answer only: no cache may keep it.
      res.setHeader('Cache-Control', 'no-store');
      res.status(201).json(result);
    } catch (err) {
      if (err instanceof ImportRejected) {
        const detail = { fileName: req.file.originalname.slice(0, 200), rows: rows.length, rejected: err.report.counts.rejected };
        await auditBy(models, actor, { action: 'import.boxes.refused', entityType: 'import', entityId: null, detail });
      }
      throw err;
    }
  });

  return r;
}
