import { CATEGORIES, STORES } from './chain.js';
import { type CalendarMonth, LAST_DAY, MINUTES_PER_DAY, weekdayOf } from './calendar.js';
import type { DemoCustomer } from './customers.js';

/** How customers shop, month by month (invented for the demo; the comments say why). */
export const BEHAVIOUR = {
  /** Refund receipts per purchase receipt: 0.0153 / 1.0153 ≈ 1.5 % of all receipts. */
  refundsPerPurchase: 0.0153,
  /** Refunds come back a few days after the purchase. */
  refundDelayDays: [1, 10] as const,
  /**
   * Store visits without any receipt (pick-ups, browsing) per purchase. With the refund visits
   * this makes about 8 % of visits without a purchase.
   */
  noReceiptVisitsPerPurchase: 0.0715,
  /** December: more trips and fuller baskets. */
  decemberVisitUplift: 1.12,
  decemberBasketUplift: 1.18,
  /** Holidays away in July and August. */
  summerVisitFactor: 0.94,
  /** Lapsing customers slow down over their last three months before stopping. */
  lapseSlowdownDays: 90,
  lapseSlowdownFactor: 0.55,
  /** Spread of one basket around the customer's usual basket (log scale). */
  basketSpread: 0.4,
  atypicalBasketSpread: 0.5,
  /** Smallest basket, in cents. */
  minimumBasketCents: 120,
  /** A department row is at least this many cents, so a small basket touches few departments. */
  minimumRowCents: 60,
};

export const EVENT_PURCHASE = 0;
export const EVENT_REFUND = 1;
export const EVENT_NO_RECEIPT = 2;

/** Relative footfall by weekday, Monday first (common practice: busier towards the weekend). */
const WEEKDAY_WEIGHT = [0.9, 0.85, 0.9, 1.0, 1.2, 1.35, 0.8];
const MAX_WEEKDAY_WEIGHT = Math.max(...WEEKDAY_WEIGHT);
/** Store trips by hour from 08:00 to 20:00 (shops close at 21:00): a lunch and an evening peak. */
const STORE_HOUR_WEIGHT = [0.5, 0.7, 0.9, 1.0, 1.1, 0.9, 0.7, 0.7, 0.9, 1.3, 1.4, 1.0, 0.6];
const STORE_OPENING_HOUR = 8;
const ONLINE_HOURS = [6, 23] as const;
const weekdays = Array.from({ length: LAST_DAY + 1 }, (_, day) => weekdayOf(day));

/**
 * One month of events for all customers, in flat number arrays (no per-row objects or strings),
 * cleared and refilled month by month so memory stays flat whatever the customer count.
 * Department rows of event e are rows rowStart[e] … rowEnd[e] - 1.
 */
export class MonthEvents {
  readonly minute: number[] = [];
  readonly customer: number[] = [];
  readonly store: number[] = [];
  readonly online: number[] = [];
  readonly kind: number[] = [];
  readonly rowStart: number[] = [];
  readonly rowEnd: number[] = [];
  readonly rowCategory: number[] = [];
  readonly rowCents: number[] = [];

  get count(): number {
    return this.minute.length;
  }

  clear(): void {
    for (const list of [this.minute, this.customer, this.store, this.online, this.kind, this.rowStart, this.rowEnd]) {
      list.length = 0;
    }
    this.rowCategory.length = 0;
    this.rowCents.length = 0;
  }

  /** Starts an event; rows added next belong to it until the next event starts. */
  add(minute: number, customer: number, store: number, online: boolean, kind: number): void {
    this.minute.push(minute);
    this.customer.push(customer);
    this.store.push(store);
    this.online.push(online ? 1 : 0);
    this.kind.push(kind);
    this.rowStart.push(this.rowCategory.length);
    this.rowEnd.push(this.rowCategory.length);
  }

  addRow(category: number, cents: number): void {
    this.rowCategory.push(category);
    this.rowCents.push(cents);
    this.rowEnd[this.rowEnd.length - 1] = this.rowCategory.length;
  }

  /** Event indices in time order (ties by customer, then by the order drawn): the file order. */
  timeOrder(): Uint32Array {
    const order = new Uint32Array(this.count);
    for (let i = 0; i < order.length; i++) order[i] = i;
    const { minute, customer } = this;
    return order.sort((a, b) => minute[a] - minute[b] || customer[a] - customer[b] || a - b);
  }
}

/** A refund waiting for its month: when, where, which department, how much (negative cents). */
export interface PendingRefund {
  minute: number;
  store: number;
  category: number;
  cents: number;
}

/** Per-customer state carried from one month to the next. */
export interface CustomerState {
  customer: DemoCustomer;
  pendingRefunds: PendingRefund[];
}

const scratchWeights = new Float64Array(CATEGORIES.length);
const scratchChosen: number[] = [];
const scratchCents: number[] = [];

/** Draws one customer's purchases, refunds and visits without a receipt for one month. */
export function drawCustomerMonth(state: CustomerState, customerIndex: number, month: CalendarMonth, events: MonthEvents): void {
  const { customer } = state;
  const { random } = customer;

  // Refunds drawn in an earlier month that fall in this one.
  if (state.pendingRefunds.length > 0) {
    const keep: PendingRefund[] = [];
    for (const refund of state.pendingRefunds) {
      if (Math.floor(refund.minute / MINUTES_PER_DAY) <= month.lastDay) addRefund(events, customerIndex, refund);
      else keep.push(refund);
    }
    state.pendingRefunds = keep;
  }

  const firstDay = Math.max(month.firstDay, customer.firstActiveDay);
  const lastDay = Math.min(month.lastDay, customer.lastActiveDay);
  if (firstDay > lastDay) return;

  const activeShare = (lastDay - firstDay + 1) / (month.lastDay - month.firstDay + 1);
  const isDecember = month.monthOfYear === 12;
  let visitFactor = isDecember ? BEHAVIOUR.decemberVisitUplift : month.monthOfYear === 7 || month.monthOfYear === 8 ? BEHAVIOUR.summerVisitFactor : 1;
  if (customer.lapseDay !== null && month.lastDay >= customer.lapseDay - BEHAVIOUR.lapseSlowdownDays) {
    visitFactor *= BEHAVIOUR.lapseSlowdownFactor;
  }
  const meanPurchases = customer.visitsPerMonth * visitFactor * activeShare;
  const basketFactor = isDecember ? BEHAVIOUR.decemberBasketUplift : 1;
  const atypical = customer.spend.name === 'atypical';

  const purchases = random.poisson(meanPurchases);
  for (let p = 0; p < purchases; p++) {
    const online = random.uniform() < customer.onlineShare;
    const day = drawDay(customer, firstDay, lastDay, online);
    const minute = day * MINUTES_PER_DAY + drawMinuteOfDay(customer, online);
    const store = online || random.uniform() >= customer.awayFromHomeShare ? customer.homeStore : otherStore(customer);
    const spread = atypical ? BEHAVIOUR.atypicalBasketSpread : BEHAVIOUR.basketSpread;
    const basketCents = Math.max(
      BEHAVIOUR.minimumBasketCents,
      Math.round(customer.basketEur * basketFactor * random.lognormalFactor(spread) * 100),
    );
    events.add(minute, customerIndex, store, online, EVENT_PURCHASE);
    splitBasket(customer, basketCents, atypical, events);
    if (random.uniform() < BEHAVIOUR.refundsPerPurchase) {
      drawRefund(state, customerIndex, day, store, month, events);
    }
  }

  const noReceiptVisits = random.poisson(meanPurchases * BEHAVIOUR.noReceiptVisitsPerPurchase);
  for (let v = 0; v < noReceiptVisits; v++) {
    const day = drawDay(customer, firstDay, lastDay, false);
    const store = random.uniform() >= customer.awayFromHomeShare ? customer.homeStore : otherStore(customer);
    events.add(day * MINUTES_PER_DAY + drawMinuteOfDay(customer, false), customerIndex, store, false, EVENT_NO_RECEIPT);
  }
}

function addRefund(events: MonthEvents, customerIndex: number, refund: PendingRefund): void {
  events.add(refund.minute, customerIndex, refund.store, false, EVENT_REFUND);
  events.addRow(refund.category, refund.cents);
}

/** A return to the store of part of one department of the purchase just drawn. */
function drawRefund(state: CustomerState, customerIndex: number, purchaseDay: number, store: number, month: CalendarMonth, events: MonthEvents): void {
  const { customer } = state;
  const { random } = customer;
  const [minDelay, maxDelay] = BEHAVIOUR.refundDelayDays;
  const day = purchaseDay + minDelay + random.index(maxDelay - minDelay + 1);
  const last = events.rowEnd.length - 1;
  const row = events.rowStart[last] + random.index(events.rowEnd[last] - events.rowStart[last]);
  const cents = -Math.max(1, Math.round(events.rowCents[row] * random.between(0.25, 1)));
  if (day > customer.lastActiveDay) return; // the customer never came back with it
  const refund: PendingRefund = {
    minute: day * MINUTES_PER_DAY + drawMinuteOfDay(customer, false),
    store,
    category: events.rowCategory[row],
    cents,
  };
  if (day <= month.lastDay) addRefund(events, customerIndex, refund);
  else state.pendingRefunds.push(refund);
}

function drawDay(customer: DemoCustomer, firstDay: number, lastDay: number, online: boolean): number {
  const { random } = customer;
  const span = lastDay - firstDay + 1;
  for (;;) {
    const day = firstDay + random.index(span);
    if (online || random.uniform() * MAX_WEEKDAY_WEIGHT < WEEKDAY_WEIGHT[weekdays[day]]) return day;
  }
}

function drawMinuteOfDay(customer: DemoCustomer, online: boolean): number {
  const { random } = customer;
  const hour = online
    ? ONLINE_HOURS[0] + random.index(ONLINE_HOURS[1] - ONLINE_HOURS[0])
    : STORE_OPENING_HOUR + random.weighted(STORE_HOUR_WEIGHT);
  return hour * 60 + random.index(60);
}

function otherStore(customer: DemoCustomer): number {
  const other = customer.random.index(STORES.length - 1);
  return other >= customer.homeStore ? other + 1 : other;
}

/** Splits a basket into department rows that add up to it exactly, in department order. */
function splitBasket(customer: DemoCustomer, basketCents: number, atypical: boolean, events: MonthEvents): void {
  const { random } = customer;
  const wanted = atypical ? 3 + random.index(4) : 1 + random.poisson(customer.basketEur / 30);
  const departments = Math.max(1, Math.min(wanted, CATEGORIES.length, Math.floor(basketCents / BEHAVIOUR.minimumRowCents)));

  scratchWeights.set(customer.categoryWeights);
  scratchChosen.length = 0;
  for (let d = 0; d < departments; d++) {
    const category = random.weighted(scratchWeights);
    scratchChosen.push(category);
    scratchWeights[category] = 0;
  }
  scratchChosen.sort((a, b) => a - b);

  let weightTotal = 0;
  scratchCents.length = 0;
  for (const category of scratchChosen) {
    const weight = customer.categoryWeights[category] * random.between(0.4, 1.6);
    scratchCents.push(weight);
    weightTotal += weight;
  }
  let allocated = 0;
  let largest = 0;
  for (let d = 0; d < departments; d++) {
    scratchCents[d] = Math.max(1, Math.floor((basketCents * scratchCents[d]) / weightTotal));
    allocated += scratchCents[d];
    if (scratchCents[d] > scratchCents[largest]) largest = d;
  }
  scratchCents[largest] += basketCents - allocated; // rounding left-over, so rows sum to the basket
  for (let d = 0; d < departments; d++) events.addRow(scratchChosen[d], scratchCents[d]);
}
