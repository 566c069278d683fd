import { assertEquals } from "../../test/_assert.ts";
import { chooseSliceSize, DEFAULT_MAX_TASKS, sliceList } from "./slices.ts";

Deno.test("chooseSliceSize: one realisation per task up to the task limit, then just enough to fit", () => {
  assertEquals(chooseSliceSize(1), 1);
  assertEquals(chooseSliceSize(DEFAULT_MAX_TASKS), 1);
  assertEquals(chooseSliceSize(DEFAULT_MAX_TASKS + 1), 2);
  assertEquals(chooseSliceSize(2500), 3); // 834 tasks ≤ 1000
  assertEquals(chooseSliceSize(10, { maxTasks: 3 }), 4);
  assertEquals(chooseSliceSize(2500, { sliceSize: 7 }), 7, "a given size is used as is");
  assertEquals(chooseSliceSize(0), 1);
});

Deno.test("sliceList: consecutive slices in order, the last one shorter; nothing for nothing", () => {
  assertEquals(sliceList(["a", "b", "c", "d", "e"], 2), [["a", "b"], ["c", "d"], ["e"]]);
  assertEquals(sliceList(["a"], 5), [["a"]]);
  assertEquals(sliceList([], 3), []);
  const items = Array.from({ length: 23 }, (_, i) => i);
  assertEquals(sliceList(items, 4).flat(), items, "every item exactly once, in order");
});
