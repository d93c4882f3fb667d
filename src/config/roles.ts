import type { Role } from '../../server/contracts';

export const roleLabels: Record<Role, string> = { admin: 'Admin', engineer: 'Engineer', viewer: 'Viewer' };

export const roleDescriptions: Record<Role, string> = {
  admin: 'Manages members and invitations, and can do everything an engineer can.',
  engineer: 'Uploads image sets, trains and evaluates codebooks.',
  viewer: 'Reads results and charts; changes nothing.',
};
