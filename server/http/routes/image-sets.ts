import { Router, type RequestHandler } from 'express';
import multer from 'multer';
import {
  createImageSetBody,
  imageSetParams,
  listImagesQuery,
  splitImageSetBody,
  teamParams,
  updateImageSetBody,
} from '../../contracts';
import { AppError } from '../../errors';
import { formatBytes } from '../../services/uploads/rejection';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

export interface UploadRequestLimits {
  maxFileBytes: number;
  maxFiles: number;
  maxRequestBytes: number;
}

const createInput = { params: teamParams, body: createImageSetBody };
const setInput = { params: imageSetParams };
const updateInput = { params: imageSetParams, body: updateImageSetBody };
const splitInput = { params: imageSetParams, body: splitImageSetBody };
const listImagesInput = { params: imageSetParams, query: listImagesQuery };

/** Multer's limit errors in words that say which limit, as the API's error shape. */
function uploadError(err: unknown, limits: UploadRequestLimits): unknown {
  const e = err as { name?: string; code?: string; field?: string };
  if (e?.name !== 'MulterError') return new AppError('bad_request', 400, 'The multipart body is malformed');
  switch (e.code) {
    case 'LIMIT_FILE_SIZE':
      return new AppError('payload_too_large', 413, `A file is larger than the ${formatBytes(limits.maxFileBytes)} limit per file`, { field: e.field, limit: limits.maxFileBytes });
    case 'LIMIT_FILE_COUNT':
      return new AppError('payload_too_large', 413, `At most ${limits.maxFiles} files per upload; send the rest in another`, { limit: limits.maxFiles });
    case 'LIMIT_UNEXPECTED_FILE':
      return new AppError('bad_request', 400, `Files go in the multipart field "files", not "${e.field}"`, { field: e.field });
    default:
      return new AppError('bad_request', 400, 'The upload is not valid', { reason: e.code, field: e.field });
  }
}

/** Buffers the parts of field `files` in memory, within the configured limits, after the caller is authorised. */
function receiveFiles(limits: UploadRequestLimits): RequestHandler {
  const parse = multer({
    storage: multer.memoryStorage(),
    // Browsers send UTF-8 file names without saying so; latin1 (the default) would garble them.
    defParamCharset: 'utf8',
    limits: { fileSize: limits.maxFileBytes, files: limits.maxFiles, fields: 20, fieldSize: 64 * 1024 },
  }).array('files');
  return (req, res, next) => {
    if (!req.is('multipart/form-data')) {
      next(new AppError('unsupported_media_type', 415, 'Send the files as multipart/form-data in the field "files"'));
      return;
    }
    // The parts are buffered in memory, so the whole body is bounded before a byte is read: browsers and
    // command-line clients send Content-Length for multipart forms; a body without one is not accepted.
    const declared = req.headers['content-length'];
    if (declared === undefined) {
      next(new AppError('bad_request', 411, 'Send uploads with a Content-Length header'));
      return;
    }
    if (Number(declared) > limits.maxRequestBytes) {
      next(
        new AppError('payload_too_large', 413, `An upload may carry at most ${formatBytes(limits.maxRequestBytes)}; send the files in several requests`, {
          limit: limits.maxRequestBytes,
        }),
      );
      return;
    }
    parse(req, res, (err?: unknown) => next(err ? uploadError(err, limits) : undefined));
  };
}

function setRoutes(r: Router, d: RouteDeps, writer: RequestHandler, admin: RequestHandler) {
  r.get('/', async (req, res) => {
    res.json({ imageSets: await d.imageSets.list(req.membership!.teamId) });
  });
  r.post('/', writer, validate(createInput), async (req, res) => {
    const { params, body } = validated(req, createInput);
    res.status(201).json({ imageSet: await d.imageSets.create(params.teamId, req.user!.id, body) });
  });
  r.get('/:setId', validate(setInput), async (req, res) => {
    const { params } = validated(req, setInput);
    res.json({ imageSet: await d.imageSets.get(params.teamId, params.setId) });
  });
  r.patch('/:setId', writer, validate(updateInput), async (req, res) => {
    const { params, body } = validated(req, updateInput);
    res.json({ imageSet: await d.imageSets.update(params.teamId, params.setId, body) });
  });
  r.delete('/:setId', admin, validate(setInput), async (req, res) => {
    const { params } = validated(req, setInput);
    await d.imageSets.remove(params.teamId, req.user!.id, params.setId);
    res.status(204).end();
  });
}

function imageRoutes(r: Router, d: RouteDeps, writer: RequestHandler, limits: UploadRequestLimits) {
  r.post('/:setId/images', writer, validate(setInput), receiveFiles(limits), async (req, res) => {
    const { params } = validated(req, setInput);
    const files = ((req.files as Express.Multer.File[] | undefined) ?? []).map((f) => ({ name: f.originalname, data: f.buffer }));
    res.status(201).json(await d.imageUploads.upload(params.teamId, req.user!.id, params.setId, files));
  });
  r.get('/:setId/images', validate(listImagesInput), async (req, res) => {
    const { params, query } = validated(req, listImagesInput);
    res.json({ images: await d.imageRecords.listForSet(params.teamId, params.setId, query.role) });
  });
  r.post('/:setId/split', writer, validate(splitInput), async (req, res) => {
    const { params, body } = validated(req, splitInput);
    res.json(await d.imageSets.split(params.teamId, req.user!.id, params.setId, body));
  });
}

/** Mounted at /api/teams/:teamId/image-sets; members read, engineers and admins change, admins delete. */
export function imageSetsRouter(d: RouteDeps, limits: UploadRequestLimits): Router {
  const r = Router({ mergeParams: true });
  r.use(d.authenticate, d.requireTeamRole());
  setRoutes(r, d, d.requireTeamRole('admin', 'engineer'), d.requireTeamRole('admin'));
  imageRoutes(r, d, d.requireTeamRole('admin', 'engineer'), limits);
  return r;
}
