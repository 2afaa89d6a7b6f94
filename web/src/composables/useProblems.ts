import { useMessage } from 'naive-ui';
import { useRoute, useRouter } from 'vue-router';
import { asProblem } from '../api/client.ts';
import type { ApiProblem } from '../api/problem.ts';
import { problemLine } from '../api/problemText.ts';
import { useSessionStore } from '../stores/session.ts';

/**
 * Shows failed calls as Naive UI messages. A 401 on a console call means the session is gone,
 * so the person is sent to sign in and brought back afterwards.
 */
export function useProblems() {
  const message = useMessage();
  const session = useSessionStore();
  const router = useRouter();
  const route = useRoute();

  function show(error: unknown, context?: string): ApiProblem {
    const problem = asProblem(error);
    if (problem.status === 401 && session.signedIn) {
      session.forget();
      message.warning('Your session has ended; sign in again.');
      void router.push({ name: 'sign-in', query: { next: route.fullPath } });
      return problem;
    }
    message.error(context ? `${context}. ${problemLine(problem)}` : problemLine(problem), { duration: 8000, closable: true });
    return problem;
  }

  /** Runs `work`, shows its problem if it fails, and returns undefined then. */
  async function attempt<T>(work: () => Promise<T>, context?: string): Promise<T | undefined> {
    try {
      return await work();
    } catch (error) {
      show(error, context);
      return undefined;
    }
  }

  return { show, attempt, message };
}
