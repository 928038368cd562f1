/**
 * Visit attachments: photos and PDFs from a phone. Received in memory (multer 2) with a size and
 * count limit; accepted only by their content (file-type), never by name or declared type; stored
 * under UPLOADS_DIR (outside the web root) as random UUID names, with a 320-px JPEG thumbnail for
 * JPEG and PNG images (jimp); served only to users whose scope covers the visit.
 */
import { randomUUID } from 'node:crypto';
import { mkdir, unlink, writeFile } from 'node:fs/promises';
import path from 'node:path';
import type { RequestHandler, Response } from 'express';
import multer from 'multer';
import { fileTypeFromBuffer } from 'file-type';
import { Jimp } from 'jimp';
import { Op } from 'sequelize';
import type { SessionUser } from '../../shared/schemas/auth';
import { ATTACHMENT_TYPES, VISIT_LIMITS, type AttachmentDto, type AttachmentType } from '../../shared/schemas/visits';
import type { AppContext } from '../context';
import type { ServiceVisit } from '../models/records';
import { HttpProblem, problems } from '../http/problem';
import { scopeWhere } from '../auth/scope';
import { auditBy } from '../audit/service';
import { toAttachmentDto, type VisitDeps } from './service';

/** Thumbnail width, px (our choice: sharp on a phone list at 2× density, a few kB). */
export const THUMB_WIDTH_PX = 320;
/** Largest image decoded for a thumbnail, pixels (our choice: a 50 MP phone photo; 4 bytes a pixel in memory). */
export const MAX_IMAGE_PIXELS = 50_000_000;
const UUID_NAME = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}(\.thumb\.jpg)?$/;
const EXT: Record<AttachmentType, string> = { 'image/jpeg': 'jpg', 'image/png': 'png', 'image/webp': 'webp', 'application/pdf': 'pdf' };

const unsupported = (detail: string) => new HttpProblem(415, 'unsupported-media', 'File type not accepted', detail);
const accepted = 'Upload photos (JPEG, PNG or WebP) or PDF documents.';

/** The absolute storage directory of the config. */
export function uploadsDir(ctx: AppContext): string {
  return path.resolve(ctx.config.UPLOADS_DIR);
}

/** The path of a stored name inside the storage directory; throws for anything but our own UUID names. */
export function storagePath(dir: string, storageName: string): string {
  if (!UUID_NAME.test(storageName)) throw new Error(`not a storage name: ${storageName.slice(0, 60)}`);
  return path.join(dir, storageName);
}

/**
 * A download name safe for a Content-Disposition header and any file system: the last path segment
 * of the client's name, only letters, digits, dot, dash, underscore and space, no leading dot,
 * at most 100 characters, ending in the extension of the detected type.
 */
export function sanitiseFileName(clientName: string, type: AttachmentType): string {
  const last = clientName.split(/[\\/]/).pop() ?? '';
  const stem = last
    .replace(/\.[^.]*$/, '')
    .replace(/[^A-Za-z0-9._ -]+/g, '_')
    .replace(/_+/g, '_')
    .replace(/^[.\s_-]+/, '')
    .trim()
    .slice(0, 90);
  return `${stem || 'attachment'}.${EXT[type]}`;
}

/** Width and height, px, from a PNG or JPEG header without decoding the image; null when not found. */
export function imageDimensions(buf: Buffer, type: AttachmentType): { widthPx: number; heightPx: number } | null {
  if (type === 'image/png' && buf.length >= 24) return { widthPx: buf.readUInt32BE(16), heightPx: buf.readUInt32BE(20) };
  if (type !== 'image/jpeg') return null;
  let i = 2;
  while (i + 9 < buf.length) {
    if (buf[i] !== 0xff) return null;
    const marker = buf[i + 1]!;
    if (marker === 0xff) {
      i++;
      continue;
    }
    const len = buf.readUInt16BE(i + 2);
    // SOF0..SOF15 except DHT (C4), JPG (C8) and DAC (CC) carry the frame size.
    if (marker >= 0xc0 && marker <= 0xcf && marker !== 0xc4 && marker !== 0xc8 && marker !== 0xcc) return { heightPx: buf.readUInt16BE(i + 5), widthPx: buf.readUInt16BE(i + 7) };
    i += 2 + len;
  }
  return null;
}

/** multer with memory storage for up to VISIT_LIMITS.filesPerUpload files in the field `files`, errors as problems. */
export function receiveFiles(ctx: AppContext): RequestHandler {
  const maxBytes = Math.round(ctx.config.UPLOAD_MAX_MIB * 1024 * 1024);
  const upload = multer({
    storage: multer.memoryStorage(),
    limits: { fileSize: maxBytes, files: VISIT_LIMITS.filesPerUpload, fields: 0, parts: VISIT_LIMITS.filesPerUpload },
  }).array('files', VISIT_LIMITS.filesPerUpload);
  return (req, res, next) => {
    if (!req.is('multipart/form-data')) return next(unsupported('Send the files as multipart/form-data in the field "files".'));
    const encoding = (req.headers['content-encoding'] ?? 'identity').trim().toLowerCase();
    if (encoding !== 'identity') return next(new HttpProblem(415, 'unsupported-encoding', 'Unsupported content encoding', 'Send the upload uncompressed (no Content-Encoding).'));
    upload(req, res, (err?: unknown) => {
      if (!err) return next();
      if (err instanceof multer.MulterError) {
        if (err.code === 'LIMIT_FILE_SIZE') return next(new HttpProblem(413, 'too-large', 'File too large', `A file may be at most ${ctx.config.UPLOAD_MAX_MIB} MiB; nothing was stored.`));
        if (err.code === 'LIMIT_FILE_COUNT' || err.code === 'LIMIT_PART_COUNT') return next(new HttpProblem(413, 'too-many-files', 'Too many files', `Send at most ${VISIT_LIMITS.filesPerUpload} files at once; nothing was stored.`));
        return next(problems.badRequest(`The upload was refused (${err.message}). Send the files in the field "files".`));
      }
      next(problems.badRequest('The upload could not be read as multipart/form-data. Send the files in the field "files".'));
    });
  };
}

interface Checked {
  type: AttachmentType;
  buffer: Buffer;
  fileName: string;
  thumb: Buffer | null;
}

/** Detects the type of one file by its bytes and makes its thumbnail; 415 for anything else. */
async function checkFile(file: Express.Multer.File): Promise<Checked> {
  const detected = await fileTypeFromBuffer(file.buffer);
  const type = ATTACHMENT_TYPES.find((t) => t === detected?.mime);
  const shown = file.originalname.split(/[\\/]/).pop()?.slice(0, 60) ?? 'file';
  if (!type) throw unsupported(`"${shown}" is ${detected ? detected.mime : 'not a recognised photo or PDF'} by its content. ${accepted} Nothing was stored.`);
  let thumb: Buffer | null = null;
  if (type === 'image/jpeg' || type === 'image/png') {
    const dim = imageDimensions(file.buffer, type);
    if (!dim || dim.widthPx === 0 || dim.heightPx === 0) throw unsupported(`"${shown}" is not a readable image. Nothing was stored.`);
    if (dim.widthPx * dim.heightPx > MAX_IMAGE_PIXELS) throw unsupported(`"${shown}" has ${dim.widthPx}×${dim.heightPx} pixels, more than ${MAX_IMAGE_PIXELS / 1e6} megapixels. Nothing was stored.`);
    try {
      const img = await Jimp.read(file.buffer);
      if (img.width > THUMB_WIDTH_PX) img.resize({ w: THUMB_WIDTH_PX });
      thumb = await img.getBuffer('image/jpeg', { quality: 75 });
    } catch {
      throw unsupported(`"${shown}" could not be read as an image. Nothing was stored.`);
    }
  }
  return { type, buffer: file.buffer, fileName: sanitiseFileName(file.originalname, type), thumb };
}

/**
 * Checks every file, then writes them and their rows all together: a refused file, a failed write
 * or a failed insert leaves no file and no row. Returns the new attachments.
 */
export async function storeAttachments(deps: VisitDeps, actor: SessionUser, visit: ServiceVisit, files: readonly Express.Multer.File[]): Promise<AttachmentDto[]> {
  const { ctx } = deps;
  if (files.length === 0) throw problems.badRequest(`No file: send photos or PDFs in the multipart field "files". ${accepted}`);
  const existing = await ctx.models.VisitAttachment.count({ where: { visitId: visit.id } });
  if (existing + files.length > VISIT_LIMITS.filesPerVisit) throw problems.conflict(`A visit holds at most ${VISIT_LIMITS.filesPerVisit} attachments; this one has ${existing}.`);
  const checked: Checked[] = [];
  for (const f of files) checked.push(await checkFile(f));
  const dir = uploadsDir(ctx);
  await mkdir(dir, { recursive: true, mode: 0o700 });
  const written: string[] = [];
  const names = checked.map(() => randomUUID());
  try {
    for (const [i, c] of checked.entries()) {
      const p = storagePath(dir, names[i]!);
      await writeFile(p, c.buffer, { flag: 'wx', mode: 0o600 });
      written.push(p);
      if (c.thumb) {
        const tp = storagePath(dir, `${names[i]!}.thumb.jpg`);
        await writeFile(tp, c.thumb, { flag: 'wx', mode: 0o600 });
        written.push(tp);
      }
    }
    const rows = await ctx.sequelize.transaction(async (t) => {
      const created = await ctx.models.VisitAttachment.bulkCreate(
        checked.map((c, i) => ({ visitId: visit.id, customerId: visit.customerId, contentType: c.type, sizeBytes: c.buffer.length, storageName: names[i]!, hasThumb: c.thumb !== null, fileName: c.fileName, uploadedBy: actor.id, createdAt: new Date() })),
        { transaction: t },
      );
      await auditBy(ctx.models, { userId: actor.id, requestId: deps.requestId }, { action: 'visit.attachments.add', entityType: 'service-visit', entityId: visit.id, customerId: visit.customerId, detail: { files: checked.map((c) => ({ type: c.type, bytes: c.buffer.length, name: c.fileName })) } }, t);
      return created;
    });
    // bulkCreate ids are not trusted (STACK-NOTES §3): read the rows back by their storage names.
    const stored = await ctx.models.VisitAttachment.findAll({ where: { storageName: { [Op.in]: rows.map((r) => r.storageName) } }, order: [['id', 'ASC']] });
    return stored.map(toAttachmentDto);
  } catch (err) {
    await Promise.all(written.map((p) => unlink(p).catch(() => undefined)));
    throw err;
  }
}

/**
 * Sends an attachment or its thumbnail to a user in scope of its visit (404 otherwise): images
 * inline, PDFs as a download, with the sanitised name, nosniff and a sandboxing CSP.
 */
export async function sendAttachment(ctx: AppContext, user: SessionUser, id: number, variant: 'file' | 'thumb', res: Response): Promise<void> {
  const a = await ctx.models.VisitAttachment.findOne({ where: { [Op.and]: [{ id }, scopeWhere(user)] } });
  if (!a) throw problems.notFound('attachment');
  // The visit decides the scope too: an attachment row copies its customer, the visit is the truth.
  const visit = await ctx.models.ServiceVisit.findOne({ where: { [Op.and]: [{ id: a.visitId }, scopeWhere(user)] }, attributes: ['id'] });
  if (!visit) throw problems.notFound('attachment');
  if (variant === 'thumb' && !a.hasThumb) throw problems.notFound('thumbnail');
  const name = variant === 'thumb' ? `${a.storageName}.thumb.jpg` : a.storageName;
  const type = variant === 'thumb' ? 'image/jpeg' : a.contentType;
  const fileName = variant === 'thumb' ? a.fileName.replace(/\.[a-z]+$/, '-thumb.jpg') : a.fileName;
  const disposition = type === 'application/pdf' ? 'attachment' : 'inline';
  const dir = uploadsDir(ctx);
  storagePath(dir, name);
  res.setHeader('X-Content-Type-Options', 'nosniff');
  res.setHeader('Content-Security-Policy', "default-src 'none'; img-src 'self'; style-src 'unsafe-inline'; sandbox");
  res.setHeader('Content-Disposition', `${disposition}; filename="${fileName}"`);
  res.setHeader('Cache-Control', 'private, max-age=300');
  await new Promise<void>((resolve, reject) => {
    res.sendFile(name, { root: dir, headers: { 'Content-Type': type }, dotfiles: 'deny' }, (err?: Error) => {
      if (!err) return resolve();
      if (res.headersSent) return resolve();
      reject(problems.notFound('attachment file'));
    });
  });
}
