import { Router } from 'express';
import { imageParams, updateImageBody } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const imageInput = { params: imageParams };
const updateInput = { params: imageParams, body: updateImageBody };

// Only members may see these bytes, and a hash never changes its content: private, long-lived, revalidated by ETag.
const imageCaching = 'private, max-age=86400';

/** Mounted at /api/teams/:teamId/images; members read, engineers and admins change roles, admins delete. */
export function imagesRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  r.use(d.authenticate, d.requireTeamRole());

  r.get('/:imageId', validate(imageInput), async (req, res) => {
    const { params } = validated(req, imageInput);
    res.json({ image: await d.imageRecords.get(params.teamId, params.imageId) });
  });

  r.patch('/:imageId', d.requireTeamRole('admin', 'engineer'), validate(updateInput), async (req, res) => {
    const { params, body } = validated(req, updateInput);
    res.json({ image: await d.imageRecords.setRole(params.teamId, params.imageId, body.role) });
  });

  r.delete('/:imageId', d.requireTeamRole('admin'), validate(imageInput), async (req, res) => {
    const { params } = validated(req, imageInput);
    await d.imageRecords.remove(params.teamId, req.user!.id, params.imageId);
    res.status(204).end();
  });

  r.get('/:imageId/thumbnail', validate(imageInput), async (req, res) => {
    const { params } = validated(req, imageInput);
    const thumb = await d.imageRecords.thumbnail(params.teamId, params.imageId);
    // res.send answers 304 itself when If-None-Match carries this ETag.
    res.set({ 'Content-Type': thumb.contentType, 'Cache-Control': imageCaching, ETag: thumb.etag }).send(thumb.data);
  });

  r.get('/:imageId/original', validate(imageInput), async (req, res, next) => {
    const { params } = validated(req, imageInput);
    const file = await d.imageRecords.original(params.teamId, params.imageId);
    const headers = { 'Content-Type': file.contentType, 'Cache-Control': imageCaching, ETag: file.etag };
    // Object paths have no extension and may sit under a dot folder, so type and dotfiles are given explicitly.
    res.sendFile(file.path, { headers, etag: false, lastModified: false, dotfiles: 'allow' }, (err) => err && next(err));
  });

  return r;
}
