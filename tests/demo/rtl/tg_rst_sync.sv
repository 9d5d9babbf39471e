// Reset synchronizer: the reset asserts at once and is released two clock edges after the
// raw reset rises, in step with `clk`. One per clock domain.
module tg_rst_sync (
    input  logic clk,
    input  logic rst_n,        // raw reset, asynchronous to clk
    output logic rst_sync_n    // the reset of clk's domain
);
  logic [1:0] q;
  always_ff @(posedge clk or negedge rst_n) begin
    if (!rst_n) q <= 2'b00;
    else        q <= {q[0], 1'b1};
  end
  assign rst_sync_n = q[1];
endmodule
