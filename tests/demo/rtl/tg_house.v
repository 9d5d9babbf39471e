// Housekeeping on the real-time clock: battery monitor and a log strobe from the logger.
module tg_house (
    input            clk_rtc,
    input            clk_sys,
    input            rst_n,       // clk_sys domain reset (synchronized in tg_top)
    input            rst_rtc_n,   // clk_rtc domain reset (synchronized in tg_top)
    input            log_en,
    input            batt_low,
    output reg [3:0] strobes,
    output reg       batt_flag
);
  // a one-cycle strobe in the fast system domain (100 MHz)
  reg log_strobe;
  reg [3:0] div_sys;
  always @(posedge clk_sys or negedge rst_n)
    if (!rst_n) begin
      div_sys    <= 4'd0;
      log_strobe <= 1'b0;
    end else begin
      div_sys    <= div_sys + 4'd1;
      log_strobe <= 1'b0;
      if (div_sys == 4'd15)
        log_strobe <= 1'b1;
    end

  // BUG (warning): the strobe crosses to the 32.768 kHz domain through a level chain
  reg strobe_s1, strobe_s2;
  always @(posedge clk_rtc or negedge rst_rtc_n)
    if (!rst_rtc_n) begin
      strobe_s1 <= 1'b0;
      strobe_s2 <= 1'b0;
      strobes   <= 4'd0;
    end else begin
      strobe_s1 <= log_strobe;
      strobe_s2 <= strobe_s1;
      if (strobe_s2)
        strobes <= strobes + 4'd1;
    end

  // BUG (warning): clock gated by plain logic
  wire clk_batt = clk_rtc & log_en;

  // batt_low is asynchronous: a chain on the gated clock, but stage 1 is also read directly
  reg batt_s1, batt_s2;
  always @(posedge clk_batt or negedge rst_rtc_n)
    if (!rst_rtc_n) begin
      batt_s1   <= 1'b0;
      batt_s2   <= 1'b0;
      batt_flag <= 1'b0;
    end else begin
      batt_s1   <= batt_low;
      batt_s2   <= batt_s1;
      batt_flag <= batt_s2 | batt_s1;   // BUG (warning): reads stage 1
    end
endmodule
