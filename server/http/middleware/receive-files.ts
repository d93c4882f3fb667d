import { rm } from 'node:fs/promises';
import type { RequestHandler } from 'express';
import multer from 'multer';
import { AppError, rateLimited } from '../../errors';
import type { UploadedFile } from '../../services';
import type { ScratchFolder, SpooledFile } from '../../storage/spool';
import { formatBytes } from '../../services/uploads/rejection';
import type { ConcurrencyGate } from './concurrency-gate';

export interface UploadRequestLimits {
  maxFileBytes: number;
  maxFiles: number;
  maxRequestBytes: number;
}

/** What receiveFiles leaves for the handler: the parts of field "files", on disk, and the folder they are in. */
export interface ReceivedUpload {
  files: UploadedFile[];
  /** Removed by the service once the upload is decided; that also frees the upload's place at the gate. */
  scratch: ScratchFolder;
}

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

/** Refusals decided from the headers alone, before the upload takes a place or a byte of it is read. */
function headerRefusal(req: Parameters<RequestHandler>[0], limits: UploadRequestLimits): AppError | null {
  if (!req.is('multipart/form-data')) return new AppError('unsupported_media_type', 415, 'Send the files as multipart/form-data in the field "files"');
  // Browsers and command-line clients send Content-Length for multipart forms, and Node's parser holds the body
  // to it, so the declared length bounds what the request can put on disk.
  const declared = req.headers['content-length'];
  if (declared === undefined) return new AppError('bad_request', 411, 'Send uploads with a Content-Length header');
  if (Number(declared) > limits.maxRequestBytes) {
    return new AppError('payload_too_large', 413, `An upload may carry at most ${formatBytes(limits.maxRequestBytes)}; send the files in several requests`, {
      limit: limits.maxRequestBytes,
    });
  }
  return null;
}

/** A multer storage engine that streams each part into the scratch folder, hashing it on the way. */
function spoolStorage(scratch: ScratchFolder, spooled: Map<string, SpooledFile>): multer.StorageEngine {
  return {
    _handleFile(_req, file, done) {
      scratch.write(file.stream).then(
        (written) => {
          spooled.set(written.path, written);
          done(null, { path: written.path, size: written.bytes });
        },
        (err: unknown) => done(err),
      );
    },
    _removeFile(_req, file, done) {
      rm(file.path, { force: true }).then(() => done(null), done);
    },
  };
}

/**
 * Receives the parts of field `files` into a scratch folder on disk, after the caller is authorised, within the
 * configured limits: memory holds a chunk per part whatever the upload's size. The gate bounds uploads in
 * progress (in all and per user; over it, 429 before a byte is read). The place is held until the scratch
 * folder is removed: here when receiving fails (the client left, a limit was crossed), else by the service.
 */
export function receiveFiles(deps: { limits: UploadRequestLimits; gate: ConcurrencyGate; scratchFolder(): Promise<ScratchFolder> }): RequestHandler {
  const { limits, gate } = deps;
  return async (req, res, next) => {
    const refusal = headerRefusal(req, limits);
    if (refusal) return next(refusal);
    const release = gate.acquire(req.user!.id);
    if (!release) {
      return next(rateLimited('Too many uploads are in progress; wait for one to finish and send this one again'));
    }
    let folder: ScratchFolder;
    try {
      folder = await deps.scratchFolder();
    } catch (err) {
      release();
      return next(err);
    }
    const scratch: ScratchFolder = { path: folder.path, write: folder.write, remove: () => folder.remove().finally(release) };
    const spooled = new Map<string, SpooledFile>();
    const parse = multer({
      storage: spoolStorage(scratch, spooled),
      // Browsers send UTF-8 file names without saying so; latin1 (the default) would garble them.
      defParamCharset: 'utf8',
      limits: { fileSize: limits.maxFileBytes, files: limits.maxFiles, fields: 20, fieldSize: 64 * 1024 },
    }).array('files');
    parse(req, res, (err?: unknown) => {
      if (err) return void scratch.remove().finally(() => next(uploadError(err, limits)));
      const parts = (req.files as Express.Multer.File[] | undefined) ?? [];
      req.upload = { files: parts.map((f) => ({ name: f.originalname, file: spooled.get(f.path)! })), scratch };
      next();
    });
  };
}
