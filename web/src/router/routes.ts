import type { ParamValueZeroOrMore, RouteRecordInfo, RouteRecordRaw } from 'vue-router';

/** Roles a signed-in person can hold; `meta.roles` lists who may open a page. */
export type Role = 'admin' | 'member';

type NoParams = Record<never, never>;

/** Every named route of the console; `router.push({ name })` is checked against it. */
export interface RouteNamedMap {
  status: RouteRecordInfo<'status', '/', NoParams, NoParams>;
  try: RouteRecordInfo<'try', '/try', NoParams, NoParams>;
  sweeps: RouteRecordInfo<'sweeps', '/sweeps', NoParams, NoParams>;
  'feed-lines': RouteRecordInfo<'feed-lines', '/feed-lines', NoParams, NoParams>;
  cables: RouteRecordInfo<'cables', '/cables', NoParams, NoParams>;
  keys: RouteRecordInfo<'keys', '/keys', NoParams, NoParams>;
  usage: RouteRecordInfo<'usage', '/usage', NoParams, NoParams>;
  admin: RouteRecordInfo<'admin', '/admin', NoParams, NoParams>;
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

const signedIn: readonly Role[] = ['member', 'admin'];
const adminOnly: readonly Role[] = ['admin'];

const StatusView = () => import('../views/StatusView.vue');
const PlannedView = () => import('../views/PlannedView.vue');
const NotFoundView = () => import('../views/NotFoundView.vue');

export const routes: RouteRecordRaw[] = [
  { path: '/', name: 'status', component: StatusView, meta: { title: 'Status', roles: [] } },
  {
    path: '/try',
    name: 'try',
    component: PlannedView,
    meta: {
      title: 'Try',
      roles: signedIn,
      plannedSummary:
        'Fill in a form for any calculation endpoint, send it with one of your keys, and read the JSON answer beside the same request written as a curl command.',
    },
  },
  {
    path: '/sweeps',
    name: 'sweeps',
    component: PlannedView,
    meta: {
      title: 'Sweeps',
      roles: signedIn,
      plannedSummary:
        'Upload analyzer sweeps (Touchstone one-port or CSV) and follow the upload; see SWR against frequency, a Smith chart, the lowest-SWR frequency and the bands under your SWR limit, at either end of the feed line.',
    },
  },
  {
    path: '/feed-lines',
    name: 'feed-lines',
    component: PlannedView,
    meta: {
      title: 'Feed lines',
      roles: signedIn,
      plannedSummary:
        'Describe a line of one or more sections and a load, and see the input impedance, matched and total loss, power delivered and dissipated, and the voltage and current peaks along the line.',
    },
  },
  {
    path: '/cables',
    name: 'cables',
    component: PlannedView,
    meta: {
      title: 'Cables',
      roles: signedIn,
      plannedSummary:
        'Browse generic cable types by trade designation, with attenuation against frequency and the source of every figure, and define cables of your own.',
    },
  },
  {
    path: '/keys',
    name: 'keys',
    component: PlannedView,
    meta: {
      title: 'Keys',
      roles: signedIn,
      plannedSummary:
        'Issue API keys (the secret is shown once), copy them, set a quota for each, see what each has used, and revoke the ones you no longer need.',
    },
  },
  {
    path: '/usage',
    name: 'usage',
    component: PlannedView,
    meta: {
      title: 'Usage',
      roles: signedIn,
      plannedSummary:
        'Follow requests and quota use per key over time, and see which keys are close to their limit.',
    },
  },
  {
    path: '/admin',
    name: 'admin',
    component: PlannedView,
    meta: {
      title: 'Admin',
      roles: adminOnly,
      plannedSummary:
        'Manage members, roles and invitations, every key in the account and its quota, and, when the server runs locally, read the mail it would have sent.',
    },
  },
  {
    path: '/:path(.*)*',
    name: 'not-found',
    component: NotFoundView,
    meta: { title: 'Page not found', roles: [] },
  },
];
