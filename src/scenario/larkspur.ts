/**
 * The Larkspur Veterinary Clinics network (DESIGN.md section 7; addresses documented in
 * docs/scenario.md). Everything the two generators share lives here: hosts and their roles, the
 * outside services, what each role does per hour at full clinic activity, and the clinic-hours rhythm.
 * All times are UTC; the clinics are taken to keep their hours in UTC.
 */

export const SCENARIO_NAME = 'larkspur';

export const INSIDE_CIDRS = [
  '10.60.0.0/24', '10.60.1.0/24', '10.60.2.0/24', '10.60.3.0/24', '192.168.60.0/24', '2001:db8:60::/48',
];

export type RoleName =
  | 'resolver' | 'file-server' | 'records-db' | 'backup-server'
  | 'reception' | 'exam-pc' | 'imaging' | 'guest-phone';

export interface HostSpec {
  addr: string;
  role: RoleName;
  /** Second (IPv6) address the host uses for file-server traffic, when dual-stacked. */
  addr6?: string;
}

export const RESOLVER = '10.60.0.2';
export const FILE_SERVER = '10.60.0.5';
export const FILE_SERVER6 = '2001:db8:60::5';
export const RECORDS_DB = '10.60.0.6';
export const BACKUP_SERVER = '10.60.0.9';

function clinicSite(site: number): HostSpec[] {
  const p = `10.60.${site}.`;
  const v6 = site === 3;
  const hosts: HostSpec[] = [
    { addr: `${p}10`, role: 'reception' }, { addr: `${p}11`, role: 'reception' },
  ];
  for (let i = 30; i <= 33; i++) {
    hosts.push(v6 ? { addr: `${p}${i}`, role: 'exam-pc', addr6: `2001:db8:60:3::${i}` } : { addr: `${p}${i}`, role: 'exam-pc' });
  }
  hosts.push({ addr: `${p}40`, role: 'imaging' });
  return hosts;
}

/** Every inside host, servers first. */
export const HOSTS: readonly HostSpec[] = [
  { addr: RESOLVER, role: 'resolver' },
  { addr: FILE_SERVER, role: 'file-server', addr6: FILE_SERVER6 },
  { addr: RECORDS_DB, role: 'records-db' },
  { addr: BACKUP_SERVER, role: 'backup-server' },
  ...clinicSite(1), ...clinicSite(2), ...clinicSite(3),
  ...Array.from({ length: 8 }, (_, i): HostSpec => ({ addr: `192.168.60.${20 + i}`, role: 'guest-phone' })),
];

/** A stable peer: inside server or outside service. */
export interface ServiceSpec {
  addr: string;
  proto: 6 | 17;
  port: number;
  /** Typical round-trip time from the clinics, ms. */
  rttMs: number;
  /** Typical transfer rate, bytes per second. */
  rate: number;
}

export const SERVICES = {
  smb: { addr: FILE_SERVER, proto: 6, port: 445, rttMs: 0.6, rate: 30e6 },
  smb6: { addr: FILE_SERVER6, proto: 6, port: 445, rttMs: 0.6, rate: 30e6 },
  db: { addr: RECORDS_DB, proto: 6, port: 5432, rttMs: 0.5, rate: 20e6 },
  saas: { addr: '198.51.100.10', proto: 6, port: 443, rttMs: 28, rate: 3e6 },
  lab: { addr: '198.51.100.20', proto: 6, port: 443, rttMs: 35, rate: 2e6 },
  mail: { addr: '198.51.100.30', proto: 6, port: 443, rttMs: 22, rate: 3e6 },
  updates: { addr: '198.51.100.40', proto: 6, port: 443, rttMs: 18, rate: 6e6 },
  imagingCloud: { addr: '198.51.100.77', proto: 6, port: 443, rttMs: 40, rate: 2.5e6 },
  payment: { addr: '203.0.113.10', proto: 6, port: 443, rttMs: 30, rate: 1e6 },
  video: { addr: '203.0.113.25', proto: 6, port: 443, rttMs: 15, rate: 5e6 },
  social: { addr: '203.0.113.50', proto: 6, port: 443, rttMs: 25, rate: 3e6 },
  web: { addr: '192.0.2.80', proto: 6, port: 443, rttMs: 30, rate: 3e6 },
  ntp: { addr: '192.0.2.123', proto: 17, port: 123, rttMs: 20, rate: 0 },
} satisfies Record<string, ServiceSpec>;
export type ServiceName = keyof typeof SERVICES;

/** Upstream resolvers the inside resolver forwards cache misses to. */
export const UPSTREAM_DNS = ['192.0.2.53', '198.51.100.53'];
export const DNS_MISS_RATE = 0.25;
/** Imaging telemetry: a steady small UDP stream to the imaging vendor. */
export const TELEMETRY = { addr: '198.51.100.77', port: 5004, everySec: 10, payload: 240 };

/** Fresh outside addresses for "a new service appears" churn; never used by anything else. */
export function churnPeer(i: number): string {
  const n = i % 200;
  return n < 100 ? `192.0.2.${150 + n}` : `198.51.100.${150 + n - 100}`;
}

/** What a role does: a connection to `service` `perHour` times an hour at full activity. */
export interface ActivitySpec {
  service: ServiceName | 'churn';
  perHour: number;
  /** Request and response sizes: log-normal median (bytes) and sigma. */
  up: readonly [number, number];
  down: readonly [number, number];
  /** Request/response rounds per connection, uniform in [lo, hi]. */
  rounds: readonly [number, number];
  /** Looked up in DNS first (outside names). */
  dns: boolean;
  /** Follows clinic hours (false: servers' own housekeeping, steady all day). */
  clinic: boolean;
  /** Large benign transfers are listed in the truth's `benign` periods under this label. */
  label?: string;
}

function act(service: ActivitySpec['service'], perHour: number, up: readonly [number, number], down: readonly [number, number],
  rounds: readonly [number, number] = [1, 2], clinic = true): ActivitySpec {
  const outside = service === 'churn' || !['smb', 'smb6', 'db'].includes(service);
  return { service, perHour, up, down, rounds, dns: outside && service !== 'ntp', clinic };
}

const CHURN = act('churn', 0.05, [900, 0.4], [12_000, 0.8]);
const labelled = (a: ActivitySpec, label: string): ActivitySpec => ({ ...a, label });
const UPDATES = labelled(act('updates', 0.5, [2000, 0.3], [5_000_000, 0.8], [1, 1], false), 'software-update');

export const ACTIVITIES: Record<RoleName, readonly ActivitySpec[]> = {
  'reception': [
    act('saas', 40, [1500, 0.5], [30_000, 1.0], [1, 4]),
    act('db', 25, [800, 0.5], [20_000, 0.8], [2, 6]),
    act('smb', 8, [2000, 0.6], [150_000, 1.2], [1, 3]),
    act('payment', 4, [3000, 0.3], [6000, 0.4]),
    act('mail', 8, [5000, 1.0], [20_000, 1.0]),
    act('web', 6, [1000, 0.4], [200_000, 1.0]),
    CHURN,
  ],
  'exam-pc': [
    act('db', 30, [800, 0.5], [20_000, 0.8], [2, 6]),
    act('smb', 12, [20_000, 1.2], [300_000, 1.2], [1, 3]),
    act('lab', 10, [2000, 0.5], [60_000, 0.8]),
    act('saas', 20, [1500, 0.5], [30_000, 1.0], [1, 4]),
    act('web', 4, [1000, 0.4], [200_000, 1.0]),
    CHURN,
  ],
  'imaging': [
    labelled(act('smb', 3, [4_000_000, 0.5], [20_000, 0.5], [1, 2]), 'imaging-transfer'),
    labelled(act('imagingCloud', 1, [2_000_000, 0.5], [10_000, 0.5]), 'imaging-transfer'),
    act('db', 6, [800, 0.5], [10_000, 0.6], [1, 3]),
  ],
  'guest-phone': [
    labelled(act('video', 3, [2000, 0.3], [1_500_000, 0.8]), 'guest-video'),
    act('social', 15, [3000, 0.6], [80_000, 1.0], [1, 3]),
    act('web', 5, [1000, 0.4], [150_000, 1.0]),
    CHURN,
  ],
  'resolver': [act('ntp', 4, [48, 0], [48, 0], [1, 1], false)],
  'file-server': [
    act('ntp', 4, [48, 0], [48, 0], [1, 1], false),
    UPDATES,
  ],
  'records-db': [
    act('ntp', 4, [48, 0], [48, 0], [1, 1], false),
    UPDATES,
  ],
  'backup-server': [act('ntp', 4, [48, 0], [48, 0], [1, 1], false)],
};

/** Echo checks: the backup server pings the file server and database; imaging stations their vendor. */
export const ECHO_CHECKS: readonly { from: RoleName; to: string; perHour: number }[] = [
  { from: 'backup-server', to: FILE_SERVER, perHour: 6 },
  { from: 'backup-server', to: RECORDS_DB, perHour: 6 },
  { from: 'imaging', to: '198.51.100.77', perHour: 2 },
];

/** Nightly backup: file server and database push to the backup server (rsync, TCP 873) at 02:00. */
export const BACKUP = {
  hourUtc: 2,
  port: 873,
  /** Start delay after the hour, uniform in [0, jitterMin) minutes. */
  jitterMin: 6,
  minutes: [20, 40] as const,
  bytes: { [FILE_SERVER]: 18e9, [RECORDS_DB]: 6e9 } as Record<string, number>,
  volumeSpread: 0.2,
};

const HOUR = 3_600_000;
const DAY = 24 * HOUR;

/**
 * Clinic activity in [0, 1] at epoch ms `t` (UTC): full 08:00-19:00 on weekdays with a lunch dip,
 * shoulders an hour either side, Saturday morning clinic 09:00-13:00 at half, near idle otherwise.
 */
export function clinicActivity(t: number): number {
  const day = new Date(t).getUTCDay();
  const h = ((t % DAY) + DAY) % DAY / HOUR;
  if (day === 0) return 0.03;
  if (day === 6) return h >= 9 && h < 13 ? 0.5 : 0.03;
  if (h >= 8 && h < 19) return h >= 12 && h < 13 ? 0.75 : 1;
  if ((h >= 7 && h < 8) || (h >= 19 && h < 20)) return 0.35;
  return 0.03;
}

/**
 * A per-(host, hour) multiplier around 1 (log-normal, sigma 0.3) so that hours differ the way real
 * ones do; a pure function of its arguments, so both generators and re-runs agree.
 */
export function hourNoise(seed: number, host: number, hour: number): number {
  const u1 = (mix(seed, host * 7919 + hour * 2) + 1) / 4294967297;
  const u2 = mix(seed, host * 7919 + hour * 2 + 1) / 4294967296;
  const z = Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
  return Math.exp(0.3 * z);
}

function mix(seed: number, x: number): number {
  let z = (seed ^ Math.imul(x, 0x9e3779b9)) >>> 0;
  z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
  z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
  return (z ^ (z >>> 16)) >>> 0;
}

export const MINUTE = 60_000;
export { HOUR, DAY };
