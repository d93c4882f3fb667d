export const outboxKeys = {
  all: ['outbox'] as const,
  list: (teamId: number) => [...outboxKeys.all, teamId, 'list'] as const,
};
