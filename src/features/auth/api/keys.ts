export const authKeys = {
  all: ['auth'] as const,
  me: () => [...authKeys.all, 'me'] as const,
  signupLink: (token: string) => [...authKeys.all, 'signup-link', token] as const,
};
