/** The API description is the same for every team and caller: one key, outside teamKeys. */
export const apiReferenceKeys = {
  document: ['api-description'] as const,
};
