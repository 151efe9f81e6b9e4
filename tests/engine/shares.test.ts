// How a phase's items (units, packing groups, key partitions) are dealt to its tasks.
import { describe, expect, it } from "vitest";
import { shareOf } from "../../src/engine/plan.js";

describe("task shares", () => {
  it("give every item to exactly one task, and neighbouring items to different tasks", () => {
    for (let tasks = 1; tasks <= 9; tasks++)
      for (let count = 0; count <= 30; count++) {
        const owner = new Array<number>(count).fill(-1);
        for (let i = 0; i < tasks; i++)
          for (const item of shareOf(i, tasks, count)) {
            expect(owner[item]).toBe(-1);
            owner[item] = i;
          }
        expect(owner.every((o) => o >= 0)).toBe(true);
        // The items an append reaches sit together at the end; they run in different tasks.
        if (tasks > 1) for (let item = 1; item < count; item++) expect(owner[item]).not.toBe(owner[item - 1]);
        // Each task's items in order, and shares differ by at most one item.
        const sizes = Array.from({ length: tasks }, (_, i) => shareOf(i, tasks, count).length);
        expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
        for (let i = 0; i < tasks; i++) expect(shareOf(i, tasks, count)).toEqual([...shareOf(i, tasks, count)].sort((a, b) => a - b));
      }
  });
});
