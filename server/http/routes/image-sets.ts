import { Router, type RequestHandler } from 'express';
import {
  createImageSetBody,
  imageSetParams,
  listImagesQuery,
  splitImageSetBody,
  teamParams,
  updateImageSetBody,
} from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const createInput = { params: teamParams, body: createImageSetBody };
const setInput = { params: imageSetParams };
const updateInput = { params: imageSetParams, body: updateImageSetBody };
const splitInput = { params: imageSetParams, body: splitImageSetBody };
const listImagesInput = { params: imageSetParams, query: listImagesQuery };

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

function imageRoutes(r: Router, d: RouteDeps, writer: RequestHandler) {
  // The files are read only after the role check, into a scratch folder the service removes when it is done.
  r.post('/:setId/images', writer, validate(setInput), d.receiveFiles, async (req, res) => {
    const { params } = validated(req, setInput);
    const { files, scratch } = req.upload!;
    res.status(201).json(await d.imageUploads.upload(params.teamId, req.user!.id, params.setId, files, scratch));
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
export function imageSetsRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  r.use(d.authenticate, d.requireTeamRole());
  setRoutes(r, d, d.requireTeamRole('admin', 'engineer'), d.requireTeamRole('admin'));
  imageRoutes(r, d, d.requireTeamRole('admin', 'engineer'));
  return r;
}
