// Housekeeping on the real-time clock: a divided clock made from a flop.
module tg_rtc (
    input            clk_rtc,
    input            rst_n,
    output reg [7:0] minutes
);
  reg [4:0] div;
  always @(posedge clk_rtc or negedge rst_n)
    if (!rst_n) div <= 5'd0;
    else        div <= div + 5'd1;

  // BUG (warning): div[4] is used as a clock
  always @(posedge div[4] or negedge rst_n)
    if (!rst_n) minutes <= 8'd0;
    else        minutes <= minutes + 8'd1;
endmodule
