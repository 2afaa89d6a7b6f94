import type { RouteRecordInfo, RouteRecordRaw, ParamValueZeroOrMore } from 'vue-router';

/** Roles a signed-in member holds, as the API names them; `meta.roles` lists who may open a page. */
export type Role = 'admin' | 'developer';

type NoParams = Record<never, never>;

/** Every named route of the console; `router.push({ name })` is checked against it. */
export interface RouteNamedMap {
  status: RouteRecordInfo<'status', '/', NoParams, NoParams>;
  'sign-in': RouteRecordInfo<'sign-in', '/sign-in', NoParams, NoParams>;
  invitation: RouteRecordInfo<'invitation', '/invitation', NoParams, NoParams>;
  'password-reset': RouteRecordInfo<'password-reset', '/password-reset', NoParams, NoParams>;
  try: RouteRecordInfo<'try', '/try', NoParams, NoParams>;
  sweeps: RouteRecordInfo<'sweeps', '/sweeps', NoParams, NoParams>;
  sweep: RouteRecordInfo<'sweep', '/sweeps/:id', { id: string }, { id: string }>;
  feedlines: RouteRecordInfo<'feedlines', '/feedlines', NoParams, NoParams>;
  cables: RouteRecordInfo<'cables', '/cables', NoParams, NoParams>;
  keys: RouteRecordInfo<'keys', '/keys', NoParams, NoParams>;
  usage: RouteRecordInfo<'usage', '/usage', NoParams, NoParams>;
  admin: RouteRecordInfo<'admin', '/admin', NoParams, NoParams>;
  'not-allowed': RouteRecordInfo<'not-allowed', '/not-allowed', NoParams, NoParams>;
  'not-found': RouteRecordInfo<
    'not-found',
    '/:path(.*)*',
    { path?: ParamValueZeroOrMore<true> },
    { path: string[] }
  >;
}

export type RouteName = keyof RouteNamedMap;

declare module 'vue-router' {
  interface TypesConfig {
    RouteNamedMap: RouteNamedMap;
  }

  interface RouteMeta {
    /** Short page name, used in the menu and the document title. */
    title: string;
    /** Roles allowed to open the page; empty means anyone, signed in or not. */
    roles: readonly Role[];
    /** For pages still to be built: what the page will let people do. */
    plannedSummary?: string;
  }
}

const signedIn: readonly Role[] = ['developer', 'admin'];
const adminOnly: readonly Role[] = ['admin'];

const StatusView = () => import('../views/StatusView.vue');
const NotFoundView = () => import('../views/NotFoundView.vue');

export const routes: RouteRecordRaw[] = [
  { path: '/', name: 'status', component: StatusView, meta: { title: 'Status', roles: [] } },
  { path: '/sign-in', name: 'sign-in', component: () => import('../views/SignInView.vue'), meta: { title: 'Sign in', roles: [] } },
  {
    path: '/invitation',
    name: 'invitation',
    component: () => import('../views/InvitationView.vue'),
    meta: { title: 'Join your organisation', roles: [] },
  },
  {
    path: '/password-reset',
    name: 'password-reset',
    component: () => import('../views/PasswordResetView.vue'),
    meta: { title: 'New password', roles: [] },
  },
  { path: '/try', name: 'try', component: () => import('../views/TryView.vue'), meta: { title: 'Try', roles: signedIn } },
  { path: '/sweeps', name: 'sweeps', component: () => import('../views/SweepsView.vue'), meta: { title: 'Sweeps', roles: signedIn } },
  { path: '/sweeps/:id', name: 'sweep', component: () => import('../views/SweepView.vue'), meta: { title: 'Sweep', roles: signedIn } },
  {
    path: '/feedlines',
    name: 'feedlines',
    component: () => import('../views/FeedlinesView.vue'),
    meta: { title: 'Feed lines', roles: signedIn },
  },
  // The page's earlier address, kept so bookmarks still open it.
  { path: '/feed-lines', redirect: { name: 'feedlines' }, meta: { title: 'Feed lines', roles: signedIn } },
  { path: '/cables', name: 'cables', component: () => import('../views/CablesView.vue'), meta: { title: 'Cables', roles: signedIn } },
  { path: '/keys', name: 'keys', component: () => import('../views/KeysView.vue'), meta: { title: 'Keys', roles: signedIn } },
  { path: '/usage', name: 'usage', component: () => import('../views/UsageView.vue'), meta: { title: 'Usage', roles: signedIn } },
  { path: '/admin', name: 'admin', component: () => import('../views/AdminView.vue'), meta: { title: 'Admin', roles: adminOnly } },
  {
    path: '/not-allowed',
    name: 'not-allowed',
    component: () => import('../views/NotAllowedView.vue'),
    meta: { title: 'Not for your role', roles: [] },
  },
  {
    path: '/:path(.*)*',
    name: 'not-found',
    component: NotFoundView,
    meta: { title: 'Page not found', roles: [] },
  },
];

/** Pages in the menu, in order. */
export const menuOrder: readonly RouteName[] = ['status', 'try', 'sweeps', 'feedlines', 'cables', 'keys', 'usage', 'admin'];
