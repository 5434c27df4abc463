/**
 * A corner shop restocks one product every evening. A scenario of our own: every number here
 * (prices, costs, demand probabilities, capacity) is invented for the example.
 *
 * An enumerable model: `outcomes` lists every next state with its probability, so Episcope
 * enumerates all reachable states (stock level x weekday) and computes exact values.
 */
import { defineMdp } from 'episcope';

interface Shelf {
  /** Units on the shelf in the morning. */
  stock: number;
  /** 0 = Monday .. 6 = Sunday. */
  weekday: number;
}

const CAPACITY = 8;
const PRICE = 3;
const UNIT_COST = 1;
const DELIVERY_FEE = 1.5;
const HOLDING_COST = 0.1;

/** Daily demand distribution: quiet weekdays, busy weekends (invented). */
function demand(weekday: number): Array<[units: number, probability: number]> {
  return weekday >= 5
    ? [[1, 0.2], [2, 0.3], [3, 0.3], [4, 0.2]]
    : [[0, 0.3], [1, 0.4], [2, 0.2], [3, 0.1]];
}

export default defineMdp({
  name: 'shelf-restocking',
  objective: 'maximize',
  discount: 0.95,
  rewardTerms: {
    sales: { direction: 'bonus' },
    purchasing: { direction: 'penalty' },
    holding: { direction: 'penalty' },
  },
  start: { stock: 4, weekday: 0 },
  actions: (shelf: Shelf) => (shelf.stock >= CAPACITY ? ['skip'] : ['skip', 'order-2', 'order-4']),
  outcomes(shelf: Shelf, action: string) {
    const ordered = action === 'order-2' ? 2 : action === 'order-4' ? 4 : 0;
    // The delivery arrives before opening; what does not fit on the shelf is sent back unpaid.
    const onShelf = Math.min(CAPACITY, shelf.stock + ordered);
    const bought = onShelf - shelf.stock;
    return demand(shelf.weekday).map(([units, probability]) => {
      const sold = Math.min(units, onShelf);
      const left = onShelf - sold;
      return {
        state: { stock: left, weekday: (shelf.weekday + 1) % 7 },
        probability,
        reward: {
          sales: PRICE * sold,
          purchasing: -(UNIT_COST * bought + (bought > 0 ? DELIVERY_FEE : 0)),
          holding: -HOLDING_COST * left,
        },
      };
    });
  },
});
